import { canonicalGenome } from './canonical.js';
import { GENOME_SCHEMA_VERSION, INPUT_ID, type Activation, type Genome, type LayerNode, type TrainingGenes } from './genome-schema.js';
import type { SearchSpace } from './search-space-schema.js';
import { checkGenome } from './validate.js';
import type { DataShape } from './analyze.js';

/**
 * The reference network of a run: the network a careful practitioner writes by hand for the data
 * kind, trained in every run beside the search so that every run says whether the search paid.
 * docs/reference-networks.md explains the choices; this file is the only place they are made.
 */

/** Image samples (`[height, width, channels]`), sequences (`[timeSteps, channels]`), flat feature vectors of a classifier, or flat feature vectors with a numeric target. */
export type ReferenceDataKind = 'image' | 'sequence' | 'flat' | 'regression';

/**
 * The training recipe of each reference network (common practice: Adam at 0.001 without weight
 * decay, the rate annealed to 0 by a cosine over the training). `epochs` is the budget of its search evaluation; its final training takes its length from
 * its own learning curve, like the champion's.
 */
export const REFERENCE_RECIPES: Readonly<Record<ReferenceDataKind, TrainingGenes>> = {
  image: { optimizer: 'adam', learningRate: 0.001, batchSize: 64, weightDecay: 0, epochs: 10, schedule: { kind: 'cosine', minFactor: 0, warmupEpochs: 0 } },
  sequence: { optimizer: 'adam', learningRate: 0.001, batchSize: 32, weightDecay: 0, epochs: 10, schedule: { kind: 'cosine', minFactor: 0, warmupEpochs: 0 } },
  flat: { optimizer: 'adam', learningRate: 0.001, batchSize: 32, weightDecay: 0, epochs: 10, schedule: { kind: 'cosine', minFactor: 0, warmupEpochs: 0 } },
  regression: { optimizer: 'adam', learningRate: 0.001, batchSize: 32, weightDecay: 0, epochs: 10, schedule: { kind: 'cosine', minFactor: 0, warmupEpochs: 0 } },
};

/** One line per data kind, for reports and logs. */
export const REFERENCE_DESCRIPTIONS: Readonly<Record<ReferenceDataKind, string>> = {
  image:
    'hand-made conv net: conv 3×3 16 → batch-norm → relu → max-pool 2 → conv 3×3 32 → batch-norm → relu → max-pool 2 → dropout 0.25 → flatten → dense softmax; Adam 0.001 with cosine decay, batch 64',
  sequence:
    'hand-made 1-D conv net: conv1d 3×32 → batch-norm → relu → max-pool1d 2 → conv1d 3×64 → batch-norm → relu → global average pool over time → dense head; Adam 0.001 with cosine decay, batch 32',
  flat: 'hand-made dense net: dense 128 relu → dropout 0.2 → dense 64 relu → dropout 0.2 → dense softmax; Adam 0.001 with cosine decay, batch 32',
  regression: 'hand-made dense regressor: dense 128 relu → dense 64 relu → dense 1 linear, mean squared error on the standardised target; Adam 0.001 with cosine decay, batch 32',
};

export const referenceDataKind = (data: DataShape): ReferenceDataKind =>
  data.inputShape.length === 3 ? 'image' : data.inputShape.length === 2 ? 'sequence' : data.target ? 'regression' : 'flat';

/** Widths of the hidden layers in order (filters of each conv, units of each dense). */
const WIDTHS: Readonly<Record<ReferenceDataKind, readonly number[]>> = { image: [16, 32], sequence: [32, 64], flat: [128, 64], regression: [128, 64] };

/** Kernel size of the sequence reference's convolutions (common practice for short sensor windows: 3). */
const SEQUENCE_KERNEL = 3;

/** A layer without its inputs (the reference is a chain: each layer takes the one before). */
type ChainLayer = LayerNode extends infer N ? (N extends LayerNode ? Omit<N, 'inputs'> : never) : never;

/**
 * The hand-made layers, with hidden widths `widths` and `act` as the non-linearity. `linearConv`:
 * conv → batch-norm → act; else conv(act) → batch-norm. `kernel`: the sequence convolutions' size.
 */
function layers(kind: ReferenceDataKind, widths: readonly number[], act: Activation, linearConv: boolean, kernel = SEQUENCE_KERNEL): LayerNode[] {
  const nodes: LayerNode[] = [];
  const add = (n: ChainLayer) => nodes.push({ ...n, inputs: [nodes.at(-1)?.id ?? INPUT_ID] } as LayerNode);
  if (kind === 'sequence') {
    widths.forEach((filters, i) => {
      add({ id: `conv${i + 1}`, kind: 'conv1d', filters, kernelSize: kernel, strides: 1, dilation: 1, padding: 'same', activation: linearConv ? 'linear' : act });
      add({ id: `bn${i + 1}`, kind: 'batch-norm' });
      if (linearConv) add({ id: `act${i + 1}`, kind: 'activation', activation: act });
      if (i === 0) add({ id: 'pool1', kind: 'max-pool1d', poolSize: 2, strides: 2 });
    });
    add({ id: 'gap', kind: 'global-avg-pool' });
    return nodes;
  }
  if (kind !== 'image') {
    // No dropout before a regression head: its noise goes straight into the predicted number (common practice).
    widths.forEach((units, i) => {
      add({ id: `dense${i + 1}`, kind: 'dense', units, activation: act });
      if (kind === 'flat') add({ id: `drop${i + 1}`, kind: 'dropout', rate: 0.2 });
    });
    return nodes;
  }
  widths.forEach((filters, i) => {
    add({ id: `conv${i + 1}`, kind: 'conv2d', filters, kernelSize: 3, strides: 1, padding: 'same', activation: linearConv ? 'linear' : act });
    add({ id: `bn${i + 1}`, kind: 'batch-norm' });
    if (linearConv) add({ id: `act${i + 1}`, kind: 'activation', activation: act });
    add({ id: `pool${i + 1}`, kind: 'max-pool2d', poolSize: 2, strides: 2 });
  });
  add({ id: 'drop1', kind: 'dropout', rate: 0.25 });
  add({ id: 'flat', kind: 'flatten' });
  return nodes;
}

const genomeOf = (nodes: LayerNode[], training: TrainingGenes): Genome =>
  canonicalGenome({ schemaVersion: GENOME_SCHEMA_VERSION, nodes, output: nodes.at(-1)?.id ?? INPUT_ID, training: { ...training } });

/** The reference network for `data` as written by hand, before any search space is applied. */
export function referenceGenome(data: DataShape): Genome {
  const kind = referenceDataKind(data);
  return genomeOf(layers(kind, WIDTHS[kind], 'relu', true), REFERENCE_RECIPES[kind]);
}

/** The reference network made to fit a run's search space, with each change it took; or why it cannot fit. */
export type FittedReference =
  | { ok: true; genome: Genome; description: string; adjustments: string[] }
  | { ok: false; description: string; reason: string };

/** Drops every node `drop` names and rewires its consumers to its input (every reference node has one input). */
function without(nodes: LayerNode[], drop: (n: LayerNode) => boolean): LayerNode[] {
  const replaced = new Map<string, string>();
  const out: LayerNode[] = [];
  for (const n of nodes) {
    const input = replaced.get(n.inputs[0]!) ?? n.inputs[0]!;
    if (drop(n)) replaced.set(n.id, input);
    else out.push({ ...n, inputs: [input] } as LayerNode);
  }
  return out;
}

const clamp = (v: number, r: { min: number; max: number }) => Math.min(r.max, Math.max(r.min, v));
const nearest = (v: number, allowed: readonly number[]) => allowed.reduce((best, a) => (Math.abs(a - v) < Math.abs(best - v) ? a : best));

/** The recipe's training genes moved into the space (each change noted). */
function fittedTraining(recipe: TrainingGenes, space: SearchSpace, notes: string[]): TrainingGenes {
  const t = { ...recipe };
  if (!space.optimizers.includes(t.optimizer)) t.optimizer = space.optimizers[0]!;
  t.learningRate = clamp(t.learningRate, space.learningRate);
  t.batchSize = nearest(t.batchSize, space.batchSizes);
  t.weightDecay = clamp(t.weightDecay, space.weightDecay);
  t.epochs = clamp(t.epochs, space.epochs);
  if (t.schedule && !(space.schedules ?? ['constant']).includes(t.schedule.kind)) delete t.schedule;
  for (const k of Object.keys(recipe) as (keyof TrainingGenes)[]) {
    if (t[k] !== recipe[k]) notes.push(`${k} ${String(recipe[k])} → ${String(t[k])} (the search space's limits)`);
  }
  return t;
}

/**
 * The reference network for `data` within `space`: the training genes moved into the space's
 * ranges; a non-linearity the space forbids replaced (relu first, else the first allowed); a conv
 * carries the non-linearity itself when the space forbids activation layers; optional parts of a kind the space
 * forbids (batch-norm, activation, pooling, dropout, flatten) dropped, and more of them when the
 * space allows fewer nodes; then every hidden width halved together (never below the space's
 * minimum) until the parameter and FLOP caps hold. Fails, with the reason, when a required kind
 * (conv2d for images, conv1d for sequences, dense for flat data) is forbidden or the smallest widths still break a cap.
 * Pure: the same space and data always give the same genome.
 */
export function fitReferenceNetwork(data: DataShape, space: SearchSpace): FittedReference {
  const kind = referenceDataKind(data);
  const description = REFERENCE_DESCRIPTIONS[kind];
  const notes: string[] = [];
  const required = kind === 'image' ? 'conv2d' : kind === 'sequence' ? 'conv1d' : 'dense';
  if (!space.allowedKinds.includes(required)) return { ok: false, description, reason: `the search space does not allow '${required}' layers` };
  const act: Activation = space.activations.includes('relu') ? 'relu' : space.activations[0]!;
  if (act !== 'relu') notes.push(`relu is not allowed: ${act} instead`);
  const convolutional = kind === 'image' || kind === 'sequence';
  const linearConv = convolutional && space.allowedKinds.includes('activation');
  if (convolutional && !linearConv) notes.push("'activation' layers are not allowed: each conv carries the non-linearity, batch-norm after it");
  const kernel = nearest(SEQUENCE_KERNEL, space.kernelSizes);
  if (kind === 'sequence' && kernel !== SEQUENCE_KERNEL) notes.push(`kernel size ${SEQUENCE_KERNEL} is not allowed: ${kernel} instead`);
  const range = convolutional ? space.filters : space.units;
  let widths = WIDTHS[kind].map((w) => clamp(w, range));
  let nodes = layers(kind, widths, act, linearConv, kernel);
  const forbidden = new Set(nodes.map((n) => n.kind).filter((k) => !space.allowedKinds.includes(k)));
  if (forbidden.size) notes.push(`left out (not allowed in the search space): ${[...forbidden].join(', ')}`);
  const optionalOrder: LayerNode['kind'][] = ['dropout', 'flatten', 'batch-norm'];
  const rebuild = () => {
    let out = without(layers(kind, widths, act, linearConv, kernel), (n) => forbidden.has(n.kind));
    for (const k of optionalOrder) {
      if (out.length <= space.maxNodes) break;
      out = without(out, (n) => n.kind === k);
      if (!notes.some((s) => s.includes(`'${k}'`))) notes.push(`'${k}' layers left out: the search space allows at most ${space.maxNodes} nodes`);
    }
    return out;
  };
  nodes = rebuild();
  if (nodes.length > space.maxNodes) return { ok: false, description, reason: `it needs ${nodes.length} layers and the search space allows ${space.maxNodes}` };
  const training = fittedTraining(REFERENCE_RECIPES[kind], space, notes);
  const startWidths = widths;
  for (;;) {
    const genome = genomeOf(nodes, training);
    const check = checkGenome(genome, space, data);
    if (check.ok) {
      if (widths.some((w, i) => w !== WIDTHS[kind][i])) notes.push(`widths ${WIDTHS[kind].join('/')} → ${widths.join('/')} (the search space's width range and caps)`);
      return { ok: true, genome, description, adjustments: notes };
    }
    const next = widths.map((w) => Math.max(range.min, Math.floor(w / 2)));
    if (next.every((w, i) => w === widths[i])) {
      const widest = startWidths.join('/');
      return { ok: false, description, reason: `even at the narrowest widths (${widths.join('/')}, from ${widest}) it breaks the search space: ${check.issues.map((i) => i.message).join('; ')}` };
    }
    widths = next;
    nodes = rebuild();
  }
}
