import { dilationsOf, InternalError, type Genome, type LayerKind, type LayerNode, type SampleShape } from '@netbreeder/shared-types';
import type { GenomeContext } from './minimal-genome.js';
import { clamp, drawDropoutRate, logUniformInt, pickOther, weightedPick } from './gene-values.js';
import { ancestorsOf, bypassNode, describeEdge, edgesOf, freshId, insertOnEdge, shapesOf, type Edge } from './graph-edit.js';

/**
 * Mutation operators that change the layer graph. Each is a small pure function: it returns a new
 * genome with a one-line `detail` of what changed, or null when it does not apply to this genome.
 * A result is a sensible candidate but is not guaranteed to obey the search space (a wider layer may
 * break the parameter cap, a pool may break a downstream `add`): `mutate` checks every candidate.
 */
export type MutationResult = { genome: Genome; detail: string } | null;
export type MutationOperator = (genome: Genome, ctx: GenomeContext) => MutationResult;

/**
 * Relative odds of each kind when a layer is added (only kinds the space allows and the tensor
 * accepts take part). Weight layers are favoured since they carry the capacity; the rest shape it.
 */
export const ADD_LAYER_KIND_WEIGHTS: Readonly<Record<Exclude<LayerKind, 'add' | 'concat' | 'repeat'>, number>> = {
  dense: 3,
  conv2d: 3,
  'depthwise-conv2d': 1,
  'max-pool2d': 1,
  'avg-pool2d': 1,
  conv1d: 3,
  'max-pool1d': 1,
  'avg-pool1d': 1,
  lstm: 2,
  gru: 2,
  dropout: 1,
  'batch-norm': 1,
  activation: 1,
  flatten: 1,
  'global-avg-pool': 1,
  'global-max-pool': 1,
};

/** A short description of one node, for mutation details. */
export function describeNode(n: LayerNode): string {
  switch (n.kind) {
    case 'dense':
      return `dense ${n.id} (${n.units} ${n.activation})`;
    case 'conv2d':
      return `conv2d ${n.id} (${n.kernelSize}×${n.kernelSize}×${n.filters} /${n.strides} ${n.padding} ${n.activation})`;
    case 'depthwise-conv2d':
      return `depthwise-conv2d ${n.id} (${n.kernelSize}×${n.kernelSize} ×${n.depthMultiplier} /${n.strides} ${n.activation})`;
    case 'conv1d':
      return `conv1d ${n.id} (${n.kernelSize}×${n.filters} /${n.strides} dil ${n.dilation} ${n.padding} ${n.activation})`;
    case 'max-pool2d':
    case 'avg-pool2d':
    case 'max-pool1d':
    case 'avg-pool1d':
      return `${n.kind} ${n.id} (${n.poolSize} /${n.strides})`;
    case 'lstm':
    case 'gru':
      return `${n.kind} ${n.id} (${n.units}${n.returnSequences ? ', sequence' : ', last step'})`;
    case 'dropout':
      return `dropout ${n.id} (${n.rate})`;
    case 'activation':
      return `activation ${n.id} (${n.activation})`;
    case 'add':
    case 'concat':
      return `${n.kind} ${n.id} (${n.inputs.join(', ')})`;
    default:
      return `${n.kind} ${n.id}`;
  }
}

/** The space's smallest stride of 1 if allowed, else its smallest stride. */
export const unitStride = (strides: readonly number[]): number => (strides.includes(1) ? 1 : Math.min(...strides));

/** Kinds that may go on an edge whose tensor has shape `shape`. */
function insertableKinds(shape: SampleShape, edge: Edge, ctx: GenomeContext): LayerKind[] {
  const allowed = (k: LayerKind) => ctx.space.allowedKinds.includes(k);
  const kinds: LayerKind[] = ['dropout', 'batch-norm', 'activation'];
  if (shape.length === 3) {
    const side = Math.min(shape[0]!, shape[1]!);
    kinds.push('conv2d', 'depthwise-conv2d');
    if (ctx.space.poolSizes.some((p) => p <= side)) kinds.push('max-pool2d', 'avg-pool2d');
    // Leaving the spatial domain only where nothing downstream needs it: on the head's edge.
    if (edge.to === null) kinds.push('flatten', 'global-avg-pool', 'global-max-pool');
  } else if (shape.length === 2) {
    kinds.push('conv1d', 'lstm', 'gru');
    if (ctx.space.poolSizes.some((p) => p <= shape[0]!)) kinds.push('max-pool1d', 'avg-pool1d');
    if (edge.to === null) kinds.push('flatten', 'global-avg-pool', 'global-max-pool');
  } else if (shape.length === 1) {
    kinds.push('dense');
  }
  return kinds.filter(allowed);
}

/** Pool size and stride of a new pool over a window axis of length `side`, drawn from the space. */
function poolSettings(side: number, ctx: GenomeContext): { poolSize: number; strides: number } {
  const { space, rng } = ctx;
  const poolSize = rng.pick(space.poolSizes.filter((p) => p <= side));
  const strides = space.strides.includes(poolSize) ? poolSize : Math.max(...space.strides.filter((s) => s <= poolSize), Math.min(...space.strides));
  return { poolSize, strides };
}

/**
 * A new node of `kind` reading `from`, its settings drawn from the space. A recurrent layer keeps
 * the sequence unless it feeds the head (`toHead`), where it gives its last step half the time.
 */
function newLayer(genome: Genome, kind: LayerKind, from: string, shape: SampleShape, ctx: GenomeContext, toHead: boolean): LayerNode {
  const { space, rng } = ctx;
  const base = { id: freshId(genome, kind), inputs: [from] };
  switch (kind) {
    case 'dense':
      return { ...base, kind, units: logUniformInt(rng, space.units), activation: rng.pick(space.activations) };
    case 'conv2d':
      return {
        ...base,
        kind,
        filters: logUniformInt(rng, space.filters),
        kernelSize: rng.pick(space.kernelSizes),
        strides: unitStride(space.strides),
        padding: 'same',
        activation: rng.pick(space.activations),
      };
    case 'depthwise-conv2d':
      return {
        ...base,
        kind,
        kernelSize: rng.pick(space.kernelSizes),
        strides: unitStride(space.strides),
        padding: 'same',
        depthMultiplier: 1,
        activation: rng.pick(space.activations),
      };
    case 'max-pool2d':
    case 'avg-pool2d':
      return { ...base, kind, ...poolSettings(Math.min(shape[0]!, shape[1]!), ctx) };
    case 'max-pool1d':
    case 'avg-pool1d':
      return { ...base, kind, ...poolSettings(shape[0]!, ctx) };
    case 'conv1d': {
      const dilation = rng.pick(dilationsOf(space));
      return {
        ...base,
        kind,
        filters: logUniformInt(rng, space.filters),
        kernelSize: rng.pick(space.kernelSizes),
        strides: dilation > 1 ? 1 : unitStride(space.strides),
        dilation,
        padding: 'same',
        activation: rng.pick(space.activations),
      };
    }
    case 'lstm':
    case 'gru':
      return { ...base, kind, units: logUniformInt(rng, space.units), returnSequences: !toHead || rng.chance(0.5) };
    case 'dropout':
      return { ...base, kind, rate: drawDropoutRate(rng, space.dropoutRate) };
    case 'activation':
      return { ...base, kind, activation: rng.pick(space.activations) };
    case 'batch-norm':
    case 'flatten':
    case 'global-avg-pool':
    case 'global-max-pool':
      return { ...base, kind };
    case 'add':
    case 'concat':
      throw new InternalError(`newLayer does not build merges; use addSkip for '${kind}'`);
    case 'repeat':
      throw new InternalError("newLayer does not build repeats; the motif mutations add them");
  }
}

/** Adds one layer on a random edge: a kind the space allows and the edge's tensor accepts. */
export const addLayer: MutationOperator = (genome, ctx) => {
  if (genome.nodes.length >= ctx.space.maxNodes) return null;
  const shapes = shapesOf(genome, ctx.data);
  if (!shapes) return null;
  const edge = ctx.rng.pick(edgesOf(genome));
  const shape = shapes.get(edge.from)!;
  const kind = weightedPick(
    ctx.rng,
    insertableKinds(shape, edge, ctx).map((k) => [k, ADD_LAYER_KIND_WEIGHTS[k as keyof typeof ADD_LAYER_KIND_WEIGHTS]] as const),
  );
  if (!kind) return null;
  const node = newLayer(genome, kind, edge.from, shape, ctx, edge.to === null);
  return { genome: insertOnEdge(genome, edge, node), detail: `added ${describeNode(node)} on ${describeEdge(edge)}` };
};

/**
 * Removes a random node and rewires its consumers to its input. Removing a merge keeps one of its
 * branches at random and prunes the others, so this also removes skip connections.
 */
export const removeLayer: MutationOperator = (genome, ctx) => {
  if (!genome.nodes.length) return null;
  const node = ctx.rng.pick(genome.nodes);
  const keep = node.inputs.length === 1 ? node.inputs[0]! : ctx.rng.pick(node.inputs);
  const next = bypassNode(genome, node.id, keep);
  const pruned = genome.nodes.length - 1 - next.nodes.length;
  return {
    genome: next,
    detail: `removed ${describeNode(node)}; its consumers now read ${keep}${pruned > 0 ? `; ${pruned} node(s) left unused were pruned` : ''}`,
  };
};

/** Replaces node `id` with `patch` applied. */
const patchNode = (genome: Genome, id: string, patch: Partial<LayerNode>): Genome => ({
  ...genome,
  nodes: genome.nodes.map((n) => (n.id === id ? ({ ...n, ...patch } as LayerNode) : n)),
});

/** The width of a layer that has one: its units (dense, lstm, gru) or filters (conv2d, conv1d). */
export function widthOf(n: LayerNode): { field: 'units' | 'filters'; value: number } | null {
  if ('units' in n) return { field: 'units', value: n.units };
  if ('filters' in n) return { field: 'filters', value: n.filters };
  return null;
}

/** Doubles or halves the units or filters of a layer that has them, within the space's range. */
export const changeWidth: MutationOperator = (genome, ctx) => {
  const targets = genome.nodes.filter((n) => widthOf(n));
  if (!targets.length) return null;
  const node = ctx.rng.pick(targets);
  const { field, value } = widthOf(node)!;
  const range = ctx.space[field];
  const grow = ctx.rng.chance(0.5);
  for (const up of [grow, !grow]) {
    const next = clamp(up ? value * 2 : Math.max(1, Math.round(value / 2)), range);
    if (next !== value) return { genome: patchNode(genome, node.id, { [field]: next }), detail: `${field} of ${node.id} ${value} → ${next}` };
  }
  return null;
};

/** Gives a convolution (conv2d, depthwise-conv2d, conv1d) another kernel size from the space. */
export const changeKernelSize: MutationOperator = (genome, ctx) => {
  const targets = genome.nodes.filter((n) => 'kernelSize' in n);
  if (!targets.length) return null;
  const node = ctx.rng.pick(targets);
  if (!('kernelSize' in node)) return null;
  const next = pickOther(ctx.rng, ctx.space.kernelSizes, node.kernelSize);
  if (next === null) return null;
  return { genome: patchNode(genome, node.id, { kernelSize: next }), detail: `kernel size of ${node.id} ${node.kernelSize} → ${next}` };
};

/** Gives a convolution or pooling layer another stride from the space. */
export const changeStride: MutationOperator = (genome, ctx) => {
  const targets = genome.nodes.filter((n) => 'strides' in n);
  if (!targets.length) return null;
  const node = ctx.rng.pick(targets);
  if (!('strides' in node)) return null;
  const next = pickOther(ctx.rng, ctx.space.strides, node.strides);
  if (next === null) return null;
  return { genome: patchNode(genome, node.id, { strides: next }), detail: `stride of ${node.id} ${node.strides} → ${next}` };
};

/** Gives a layer that has an activation (dense, convolutions, activation) another one from the space. */
export const changeActivation: MutationOperator = (genome, ctx) => {
  const targets = genome.nodes.filter((n) => 'activation' in n);
  if (!targets.length) return null;
  const node = ctx.rng.pick(targets);
  if (!('activation' in node)) return null;
  const next = pickOther(ctx.rng, ctx.space.activations, node.activation);
  if (next === null) return null;
  return { genome: patchNode(genome, node.id, { activation: next }), detail: `activation of ${node.id} ${node.activation} → ${next}` };
};

/** Can `a` and `b` be joined by a merge of `kind`? `add` needs equal shapes, `concat` equal leading axes. */
function mergeable(kind: 'add' | 'concat', a: SampleShape, b: SampleShape): boolean {
  if (a.length !== b.length) return false;
  const n = kind === 'add' ? a.length : a.length - 1;
  for (let i = 0; i < n; i++) if (a[i] !== b[i]) return false;
  return true;
}

/**
 * Adds a skip connection: on a random edge b → v it puts a merge m = add(b, a) (or concat) and v
 * reads m, where a is a node upstream of b whose shape fits. `add` or `concat` is chosen at random
 * among the allowed ones; when the chosen one has no fitting pair, the other is tried.
 */
export const addSkip: MutationOperator = (genome, ctx) => {
  if (genome.nodes.length >= ctx.space.maxNodes) return null;
  const shapes = shapesOf(genome, ctx.data);
  if (!shapes) return null;
  const kinds = ctx.rng.shuffled((['add', 'concat'] as const).filter((k) => ctx.space.allowedKinds.includes(k)));
  const edges = edgesOf(genome);
  for (const kind of kinds) {
    const pairs: { edge: Edge; skip: string }[] = [];
    for (const edge of edges) {
      const b = shapes.get(edge.from)!;
      for (const a of ancestorsOf(genome, edge.from)) if (mergeable(kind, shapes.get(a)!, b)) pairs.push({ edge, skip: a });
    }
    if (!pairs.length) continue;
    const { edge, skip } = ctx.rng.pick(pairs);
    const node: LayerNode = { id: freshId(genome, kind), kind, inputs: [edge.from, skip] };
    return { genome: insertOnEdge(genome, edge, node), detail: `added ${kind} ${node.id}(${edge.from}, ${skip}) on ${describeEdge(edge)}` };
  }
  return null;
};
