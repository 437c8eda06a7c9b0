import { checkGenome, genomeHash, NetbreederError, type Genome } from '@netbreeder/shared-types';
import type { GenomeContext } from './minimal-genome.js';
import { weightedPick } from './gene-values.js';
import { addLayer, addSkip, changeActivation, changeKernelSize, changeStride, changeWidth, removeLayer, type MutationOperator } from './layer-mutations.js';
import { changeAugment, changeLabelSmoothing, changePatience, changeSchedule } from './recipe-genes.js';
import { changeBatchSize, changeDropoutRate, changeEpochs, changeOptimizer, changeWeightDecay, perturbLearningRate } from './training-mutations.js';
import { duplicateBlock, insertBlock, removeBlock, scaleWidths } from './block-mutations.js';
import { changeRepeatCount, insertRepeat, makeMotif, mutateMotif } from './motif-mutations.js';

export type { MutationOperator, MutationResult } from './layer-mutations.js';

/** Every mutation operator by the name recorded in lineage. */
export const MUTATION_OPERATORS = {
  'add-layer': addLayer,
  'remove-layer': removeLayer,
  'change-width': changeWidth,
  'change-kernel-size': changeKernelSize,
  'change-stride': changeStride,
  'change-activation': changeActivation,
  'add-skip': addSkip,
  'perturb-learning-rate': perturbLearningRate,
  'change-batch-size': changeBatchSize,
  'change-optimizer': changeOptimizer,
  'change-weight-decay': changeWeightDecay,
  'change-dropout-rate': changeDropoutRate,
  'change-epochs': changeEpochs,
  'insert-block': insertBlock,
  'remove-block': removeBlock,
  'scale-widths': scaleWidths,
  'duplicate-block': duplicateBlock,
  'change-repeat-count': changeRepeatCount,
  'mutate-motif': mutateMotif,
  'make-motif': makeMotif,
  'insert-repeat': insertRepeat,
  'change-schedule': changeSchedule,
  'change-augment': changeAugment,
  'change-label-smoothing': changeLabelSmoothing,
  'change-patience': changePatience,
} as const satisfies Record<string, MutationOperator>;

export type MutationOperatorName = keyof typeof MUTATION_OPERATORS;

/**
 * Relative odds of each operator (total 41). Single layers get 17: the search starts from a linear
 * classifier and must grow, so adding a layer is the most common move (6), with removal (2) to undo
 * growth that does not pay; width (3), kernel size (2), skip connections (2), stride and activation
 * (1 each) refine it. Whole blocks get 6, moves of the size that usually pays off: inserting a
 * conv or dense block (3) grows a useful depth in one step; removing one, duplicating one, and
 * widening or narrowing every layer at once (1 each) change depth and width at the network's scale.
 * Repeated motifs get 5: changing one (2) reshapes every application; a repeat count ±1, turning a
 * block into a motif, and applying a motif elsewhere 1 each. Training genes get 7: the learning
 * rate, which matters most, 2; batch size, optimizer, weight decay, dropout rate and epochs 1 each.
 * The recipe genes get 6: the learning-rate schedule and the augmentation, which change what a
 * longer training gains, 2 each; label smoothing and early stopping 1 each (each applies only where
 * the search space gives it a range).
 * An operator that does not apply (no conv layer to widen, no motif to repeat) is simply drawn
 * again, so on a young genome the layer and block moves share the odds.
 */
export const DEFAULT_MUTATION_WEIGHTS: Readonly<Record<MutationOperatorName, number>> = {
  'add-layer': 6,
  'remove-layer': 2,
  'change-width': 3,
  'change-kernel-size': 2,
  'change-stride': 1,
  'change-activation': 1,
  'add-skip': 2,
  'perturb-learning-rate': 2,
  'change-batch-size': 1,
  'change-optimizer': 1,
  'change-weight-decay': 1,
  'change-dropout-rate': 1,
  'change-epochs': 1,
  'insert-block': 3,
  'remove-block': 1,
  'scale-widths': 1,
  'duplicate-block': 1,
  'change-repeat-count': 1,
  'mutate-motif': 2,
  'make-motif': 1,
  'insert-repeat': 1,
  'change-schedule': 2,
  'change-augment': 2,
  'change-label-smoothing': 1,
  'change-patience': 1,
};

/** How {@link mutate} draws and retries. */
export interface MutateOptions {
  /** Relative odds per operator; operators left out keep their default, weight 0 turns one off.
   * @default DEFAULT_MUTATION_WEIGHTS */
  weights?: Partial<Record<MutationOperatorName, number>>;
  /** Operator draws before giving up; each draw that does not apply, breaks the space or changes
   * nothing counts as one.
   * @default 64 */
  maxAttempts?: number;
}

export interface MutateContext extends GenomeContext, MutateOptions {}

/** What a child's lineage records: which operator and what exactly it changed. */
export interface Mutation {
  operator: MutationOperatorName | (string & {});
  detail: string;
}

export interface MutationOutcome {
  /** The child: it passes `checkGenome` and its hash differs from the parent's. */
  genome: Genome;
  /** The child's canonical hash (computed anyway to compare it with the parent's). */
  genomeHash: string;
  mutation: Mutation;
  /** Operator draws it took (1 when the first one worked). */
  attempts: number;
}

/** Thrown when no operator produced a valid, different child within the attempt budget. */
export class MutationError extends NetbreederError {
  constructor(message: string) {
    super('NB_NO_VALID_MUTATION', message);
  }
}

const DEFAULT_MAX_ATTEMPTS = 64;

/**
 * A child of `parent`: draws an operator by weight, applies it, and keeps the result only when it
 * passes `checkGenome` against the space and data and its canonical hash differs from the parent's;
 * otherwise draws again, up to `maxAttempts` times, then throws {@link MutationError}. The parent is
 * never modified. `knownParentHash`: the parent's hash when the caller has it (not computed again).
 */
export function mutate(parent: Genome, ctx: MutateContext, knownParentHash?: string): MutationOutcome {
  const weights = { ...DEFAULT_MUTATION_WEIGHTS, ...ctx.weights };
  const table = (Object.keys(MUTATION_OPERATORS) as MutationOperatorName[]).map((name) => [name, weights[name]] as const);
  const maxAttempts = ctx.maxAttempts ?? DEFAULT_MAX_ATTEMPTS;
  let parentHash: string | null = knownParentHash ?? null;
  try {
    parentHash ??= genomeHash(parent);
  } catch {
    parentHash = null; // a structurally broken parent: any valid child differs from it
  }
  for (let attempt = 1; attempt <= maxAttempts; attempt++) {
    const operator = weightedPick(ctx.rng, table);
    if (operator === null) throw new MutationError('every mutation weight is 0; give at least one operator a positive weight');
    const result = MUTATION_OPERATORS[operator](parent, ctx);
    if (!result) continue;
    const check = checkGenome(result.genome, ctx.space, ctx.data);
    if (!check.ok) continue;
    const childHash = genomeHash(check.genome);
    if (childHash === parentHash) continue;
    // A deep copy (genomes are plain JSON), so the child shares no node object with its parent.
    return { genome: JSON.parse(JSON.stringify(check.genome)) as Genome, genomeHash: childHash, mutation: { operator, detail: result.detail }, attempts: attempt };
  }
  throw new MutationError(
    `no valid child differing from genome ${parentHash?.slice(0, 12) ?? '(invalid)'} in ${maxAttempts} attempts; ` +
      'the search space leaves no room to move (widen its ranges, raise maxNodes or the parameter / FLOP caps)',
  );
}
