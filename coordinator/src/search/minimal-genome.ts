import {
  checkGenome,
  formatGenomeIssues,
  GENOME_SCHEMA_VERSION,
  INPUT_ID,
  NetbreederError,
  type DataShape,
  type Genome,
  type Random,
  type SearchSpace,
  type TrainingGenes,
} from '@netbreeder/shared-types';
import { drawWeightDecay, logUniformIn } from './gene-values.js';
import { drawRecipeGenes } from './recipe-genes.js';

/** What every genome-building step of the search needs: the rules, the data's shape, a seeded source. */
export interface GenomeContext {
  /** The rules every genome must obey. */
  space: SearchSpace;
  /** Input shape and class count of the run's dataset. */
  data: DataShape;
  /** The only source of randomness; advanced by every draw. */
  rng: Random;
}

/** Thrown when even the smallest network breaks the search space's caps: the run cannot start. */
export class MinimalGenomeError extends NetbreederError {
  constructor(message: string) {
    super('NB_NO_MINIMAL_GENOME', message);
  }
}

/**
 * Training genes drawn from the space: learning rate log-uniform, batch size and optimizer uniform
 * among the allowed ones, weight decay 0 half the time (see {@link drawWeightDecay}), epochs uniform
 * in range; then the recipe genes the space gives ranges for (see {@link drawRecipeGenes}; image
 * augmentation only when `data` says the samples are images).
 */
export function randomTrainingGenes(space: SearchSpace, rng: Random, data?: DataShape): TrainingGenes {
  return {
    optimizer: rng.pick(space.optimizers),
    learningRate: logUniformIn(rng, space.learningRate),
    batchSize: rng.pick(space.batchSizes),
    weightDecay: drawWeightDecay(rng, space.weightDecay),
    epochs: rng.int(space.epochs.min, space.epochs.max),
    ...drawRecipeGenes(space, rng, data),
  };
}

/**
 * The smallest network for the dataset: no hidden nodes, so the output is the input itself and the
 * implicit head (flatten when spatial, then dense softmax) makes it a linear classifier. Only the
 * training genes are random. Throws {@link MinimalGenomeError} when that linear classifier already
 * breaks the parameter or FLOP cap, since every other genome is built from it.
 */
export function minimalGenome(ctx: GenomeContext): Genome {
  const genome: Genome = {
    schemaVersion: GENOME_SCHEMA_VERSION,
    nodes: [],
    output: INPUT_ID,
    training: randomTrainingGenes(ctx.space, ctx.rng, ctx.data),
  };
  const check = checkGenome(genome, ctx.space, ctx.data);
  if (!check.ok) {
    throw new MinimalGenomeError(
      `even a linear classifier on input [${ctx.data.inputShape.join(', ')}] with ${ctx.data.numClasses} classes ` +
        `breaks the search space: ${formatGenomeIssues(check.issues)}; raise maxParams / maxFlops or use smaller samples`,
    );
  }
  return genome;
}
