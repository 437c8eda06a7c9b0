import { checkGenome, GENOME_SCHEMA_VERSION, INPUT_ID, type Genome, type LayerNode, type SearchSpace, type TrainingGenes } from '@netbreeder/shared-types';
import { clamp, logUniformIn } from './gene-values.js';
import { minimalGenome, randomTrainingGenes, type GenomeContext } from './minimal-genome.js';

/**
 * Where a search's fresh genomes come from (`search.start` in a run file):
 * - `family`: networks a careful practitioner would write by hand, drawn around the reference
 *   network of the data kind (see docs/reference-networks.md): convolution blocks (conv, batch
 *   norm, ReLU, max-pool) for images, the same in 1-D or a stack of LSTM or GRU layers for
 *   sequences, dense blocks (dense, dropout) for tables, with varied depth,
 *   width, kernel size and a sensible training recipe;
 * - `minimal`: the linear classifier that mutations must grow (the search of the first versions);
 * - `mixed`: each fresh genome is one or the other with even odds.
 */
export type StartKind = 'family' | 'minimal' | 'mixed';
export const START_KINDS: readonly StartKind[] = ['family', 'minimal', 'mixed'];

/** A fresh genome and which start made it ('family' or 'minimal'). */
export interface FreshGenome {
  genome: Genome;
  origin: 'family' | 'minimal';
}

/** Draws a fresh genome for `start`; the draws are seeded by `ctx.rng` alone. */
export function freshGenome(start: StartKind, ctx: GenomeContext): FreshGenome {
  const family = start === 'family' || (start === 'mixed' && ctx.rng.chance(0.5));
  if (family) {
    const genome = familyGenome(ctx);
    if (genome) return { genome, origin: 'family' };
  }
  return { genome: minimalGenome(ctx), origin: 'minimal' };
}

/** Attempts at a family member that fits the space before the width is halved once more. */
const FITS_PER_SCALE = 4;

/**
 * One member of the hand-made family for the run's data, or null when no member fits the search
 * space (its caps or allowed kinds). Draws depth, widths and recipe; when a draw breaks a cap, it
 * draws again a few times and then halves every width, so a small space still gets the shape.
 */
export function familyGenome(ctx: GenomeContext): Genome | null {
  const { space, data, rng } = ctx;
  const rank = data.inputShape.length;
  for (let scale = 1; scale >= 1 / 16; scale /= 2) {
    for (let attempt = 0; attempt < FITS_PER_SCALE; attempt++) {
      const nodes = rank === 3 ? convFamily(ctx, scale) : rank === 2 ? sequenceFamily(ctx, scale) : denseFamily(ctx, scale);
      if (!nodes) return null;
      const genome: Genome = {
        schemaVersion: GENOME_SCHEMA_VERSION,
        nodes,
        output: nodes.length ? nodes[nodes.length - 1]!.id : INPUT_ID,
        training: familyTraining(space, rng, data),
      };
      if (checkGenome(genome, space, data).ok) return genome;
    }
  }
  return null;
}

const allows = (space: SearchSpace, ...kinds: LayerNode['kind'][]) => kinds.every((k) => space.allowedKinds.includes(k));
const inRange = (v: number, r: { min: number; max: number }) => clamp(Math.round(v), r);

/** A chain's nodes from specs without inputs: each node is fed by the one before. */
function chain(specs: Array<Record<string, unknown> & { id: string; kind: LayerNode['kind'] }>): LayerNode[] {
  return specs.map((s, i) => ({ ...s, inputs: [i === 0 ? INPUT_ID : specs[i - 1]!.id] }) as LayerNode);
}

/**
 * 1 to 3 convolution blocks, widths doubling from 8, 16 or 32 (times `scale`), kernel 3 (or 5 on
 * the first block), batch norm in most members, a max-pool after each block while the image (or
 * sequence, for 1-D blocks) is at least 8 pixels (steps) wide, then dropout and a flatten or global
 * average pool (mostly the pool on sequences, as in their reference network).
 */
function convFamily(ctx: GenomeContext, scale: number): LayerNode[] | null {
  const { space, data, rng } = ctx;
  const sequence = data.inputShape.length === 2;
  const [convKind, poolKind] = sequence ? (['conv1d', 'max-pool1d'] as const) : (['conv2d', 'max-pool2d'] as const);
  if (!allows(space, convKind)) return null;
  const norm = allows(space, 'batch-norm', 'activation') && rng.chance(0.8);
  const pool = allows(space, poolKind) && space.poolSizes.includes(2) && space.strides.includes(2);
  const blocks = rng.int(1, 3);
  const base = rng.pick([8, 16, 32]) * scale;
  const kernel = (first: boolean) => (first && space.kernelSizes.includes(5) && rng.chance(0.3) ? 5 : space.kernelSizes.includes(3) ? 3 : rng.pick(space.kernelSizes));
  const specs: Array<Record<string, unknown> & { id: string; kind: LayerNode['kind'] }> = [];
  let side = sequence ? data.inputShape[0]! : Math.min(data.inputShape[0]!, data.inputShape[1]!);
  for (let b = 1; b <= blocks; b++) {
    const filters = inRange(base * 2 ** (b - 1), space.filters);
    const activation = space.activations.includes('relu') ? 'relu' : space.activations[0]!;
    const conv = { id: `c${b}`, filters, kernelSize: kernel(b === 1), strides: 1, padding: 'same', activation: norm ? 'linear' : activation };
    specs.push(sequence ? { ...conv, kind: 'conv1d', dilation: 1 } : { ...conv, kind: 'conv2d' });
    if (norm) specs.push({ id: `n${b}`, kind: 'batch-norm' }, { id: `a${b}`, kind: 'activation', activation });
    if (pool && side >= 8) {
      specs.push({ id: `p${b}`, kind: poolKind, poolSize: 2, strides: 2 });
      side = Math.floor(side / 2);
    }
  }
  if (allows(space, 'dropout') && rng.chance(0.7)) specs.push({ id: 'drop', kind: 'dropout', rate: dropoutRate(space, rng) });
  if (allows(space, 'global-avg-pool') && rng.chance(sequence ? 0.8 : 0.2)) specs.push({ id: 'gap', kind: 'global-avg-pool' });
  else if (allows(space, 'flatten')) specs.push({ id: 'flat', kind: 'flatten' });
  return chain(specs);
}

/**
 * For sequences, half the time (or always, when the space allows no conv1d) 1 or 2 LSTM or GRU
 * layers of 16, 32 or 64 units (times `scale`), the last giving its last step, then dropout in most
 * members; otherwise the 1-D convolution family.
 */
function sequenceFamily(ctx: GenomeContext, scale: number): LayerNode[] | null {
  const { space, rng } = ctx;
  const recurrent = (['lstm', 'gru'] as const).filter((k) => allows(space, k));
  if (!recurrent.length || (allows(space, 'conv1d') && rng.chance(0.5))) return convFamily(ctx, scale);
  const kind = rng.pick(recurrent);
  const layers = rng.int(1, 2);
  const units = inRange(rng.pick([16, 32, 64]) * scale, space.units);
  const specs: Array<Record<string, unknown> & { id: string; kind: LayerNode['kind'] }> = [];
  for (let l = 1; l <= layers; l++) specs.push({ id: `r${l}`, kind, units, returnSequences: l < layers });
  if (allows(space, 'dropout') && rng.chance(0.7)) specs.push({ id: 'drop', kind: 'dropout', rate: dropoutRate(space, rng) });
  return chain(specs);
}

/** 1 to 3 dense layers of 32 to 256 units (times `scale`), narrowing, each followed by dropout in most members. */
function denseFamily(ctx: GenomeContext, scale: number): LayerNode[] | null {
  const { space, rng } = ctx;
  if (!allows(space, 'dense')) return null;
  const layers = rng.int(1, 3);
  const first = rng.pick([64, 128, 256]) * scale;
  const activation = space.activations.includes('relu') ? 'relu' : space.activations[0]!;
  const drop = allows(space, 'dropout') && rng.chance(0.7);
  const specs: Array<Record<string, unknown> & { id: string; kind: LayerNode['kind'] }> = [];
  for (let l = 1; l <= layers; l++) {
    specs.push({ id: `d${l}`, kind: 'dense', units: inRange(first / 2 ** (l - 1), space.units), activation });
    if (drop) specs.push({ id: `drop${l}`, kind: 'dropout', rate: dropoutRate(space, rng) });
  }
  return chain(specs);
}

/** A dropout rate of 0.1 to 0.4 (common practice), kept in the space's range and rounded to 0.05. */
const dropoutRate = (space: SearchSpace, rng: GenomeContext['rng']) => {
  const r = Math.round(rng.uniform(0.1, 0.4) * 20) / 20;
  return Math.max(space.dropoutRate.min, Math.min(space.dropoutRate.max, r));
};

/**
 * The recipe of a family member: the space's random training genes, but Adam (when allowed) with a
 * learning rate log-uniform in [3e-4, 3e-3] (common practice for Adam), kept in the space's range.
 */
function familyTraining(space: SearchSpace, rng: GenomeContext['rng'], data: GenomeContext['data']): TrainingGenes {
  const genes = randomTrainingGenes(space, rng, data);
  const lo = Math.max(space.learningRate.min, 3e-4);
  const hi = Math.min(space.learningRate.max, 3e-3);
  return {
    ...genes,
    optimizer: space.optimizers.includes('adam') ? 'adam' : genes.optimizer,
    learningRate: lo <= hi ? logUniformIn(rng, { min: lo, max: hi }) : genes.learningRate,
  };
}
