import { dilationsOf, type Activation, type Genome, type LayerKind, type LayerNode, type SampleShape } from '@netbreeder/shared-types';
import type { GenomeContext } from './minimal-genome.js';
import { clamp, drawDropoutRate, logUniformInt } from './gene-values.js';
import { bypassNode, describeEdge, edgesOf, freshId, insertChainAfter, insertOnEdge, readersOf, shapesOf, type Edge } from './graph-edit.js';
import { unitStride, widthOf, type MutationOperator } from './layer-mutations.js';

/**
 * Mutation operators that move by whole blocks rather than single layers: a block is a weight layer
 * with the layers that usually follow it, as one unit of depth.
 *
 * - convolution block: conv2d → batch-norm → activation, optionally → max-pool2d or avg-pool2d
 *   (the conv is linear when the activation node follows it); on sequences the same with conv1d
 *   and the 1-D pools;
 * - recurrent block (sequences): lstm or gru (keeping the sequence) → dropout;
 * - dense block: dense → dropout.
 *
 * Every follower is optional when recognising a block (a lone conv2d is a block of one), and each
 * must be the only reader of the node before it, so a block is a plain chain. Same contract as the
 * layer operators: a new genome with a `detail`, or null when the operator does not apply; `mutate`
 * checks every result against the search space.
 */

/** Activations in the ReLU family (and its smooth cousins) that a new block prefers. */
const RELU_LIKE: readonly Activation[] = ['relu', 'relu6', 'elu', 'selu', 'swish'];

/** The kinds that may follow a block's anchor, in order; each step is optional. */
const FOLLOWERS: Partial<Record<LayerKind, readonly (readonly LayerKind[])[]>> = {
  conv2d: [['batch-norm'], ['activation'], ['max-pool2d', 'avg-pool2d']],
  conv1d: [['batch-norm'], ['activation'], ['max-pool1d', 'avg-pool1d']],
  lstm: [['dropout']],
  gru: [['dropout']],
  dense: [['dropout']],
};

/** The block anchored at `anchor` (a conv2d, conv1d, lstm, gru or dense node): the anchor's id, then its followers' ids, in order. */
export function blockFrom(genome: Genome, anchor: LayerNode): string[] {
  const steps = FOLLOWERS[anchor.kind];
  if (!steps) return [];
  const ids = [anchor.id];
  for (const kinds of steps) {
    const readers = readersOf(genome, ids[ids.length - 1]!);
    if (readers.length !== 1 || readers[0] === null) break;
    const next = genome.nodes.find((n) => n.id === readers[0])!;
    if (next.inputs.length === 1 && kinds.includes(next.kind)) ids.push(next.id);
  }
  return ids;
}

/** Every block of the genome's own nodes (not those inside motifs), in node order. */
export function blocksOf(genome: Genome): string[][] {
  return genome.nodes.filter((n) => FOLLOWERS[n.kind]).map((n) => blockFrom(genome, n));
}

const byIds = (genome: Genome, ids: readonly string[]): LayerNode[] => ids.map((id) => genome.nodes.find((n) => n.id === id)!);
const describeBlock = (genome: Genome, ids: readonly string[]): string => byIds(genome, ids).map((n) => `${n.kind} ${n.id}`).join(' → ');

/** A relu-like activation the space allows, else any it allows. */
function blockActivation(ctx: GenomeContext): Activation {
  const liked = ctx.space.activations.filter((a) => RELU_LIKE.includes(a));
  return ctx.rng.pick(liked.length ? liked : ctx.space.activations);
}

/** A layer node without its id and inputs (distributes over the union of kinds). */
type NodeSettings = LayerNode extends infer N ? (N extends LayerNode ? Omit<N, 'id' | 'inputs'> : never) : never;

/** A new block (ids fresh in `genome`, settings drawn from the space) whose first node reads `from`, or null when the space allows no block on `shape`. */
function newBlock(genome: Genome, from: string, shape: SampleShape, ctx: GenomeContext): LayerNode[] | null {
  const { space, rng } = ctx;
  const allowed = (k: LayerKind) => space.allowedKinds.includes(k);
  const chain: LayerNode[] = [];
  const add = (node: NodeSettings) => {
    const id = freshId({ ...genome, nodes: [...genome.nodes, ...chain] }, node.kind);
    chain.push({ ...node, id, inputs: [chain.at(-1)?.id ?? from] } as LayerNode);
  };
  // conv (linear) → batch norm → activation when the space allows all three, otherwise the conv
  // carries the activation itself; then half the time a max-pool.
  const convBlock = (sequence: boolean): LayerNode[] => {
    const separate = allowed('activation') && space.activations.includes('linear');
    const activation = blockActivation(ctx);
    const filters = logUniformInt(rng, space.filters);
    const kernelSize = space.kernelSizes.includes(3) ? 3 : rng.pick(space.kernelSizes);
    const conv = { filters, kernelSize, strides: unitStride(space.strides), padding: 'same' as const, activation: separate ? ('linear' as const) : activation };
    if (sequence) {
      const dilation = rng.pick(dilationsOf(space));
      add({ ...conv, kind: 'conv1d', dilation, strides: dilation > 1 ? 1 : conv.strides });
    } else add({ ...conv, kind: 'conv2d' });
    if (allowed('batch-norm')) add({ kind: 'batch-norm' });
    if (separate) add({ kind: 'activation', activation });
    const pool = sequence ? 'max-pool1d' : 'max-pool2d';
    const side = sequence ? shape[0]! : Math.min(shape[0]!, shape[1]!);
    const canPool = allowed(pool) && space.poolSizes.includes(2) && space.strides.includes(2) && side >= 4;
    if (canPool && rng.chance(0.5)) add({ kind: pool, poolSize: 2, strides: 2 });
    return chain;
  };
  if (shape.length === 3 && allowed('conv2d')) return convBlock(false);
  if (shape.length === 2) {
    const anchors = (['conv1d', 'lstm', 'gru'] as const).filter(allowed);
    if (!anchors.length) return null;
    const anchor = rng.pick(anchors);
    if (anchor === 'conv1d') return convBlock(true);
    add({ kind: anchor, units: logUniformInt(rng, space.units), returnSequences: true });
    if (allowed('dropout')) add({ kind: 'dropout', rate: drawDropoutRate(rng, space.dropoutRate) });
    return chain;
  }
  if (shape.length === 1 && allowed('dense')) {
    add({ kind: 'dense', units: logUniformInt(rng, space.units), activation: blockActivation(ctx) });
    if (allowed('dropout')) add({ kind: 'dropout', rate: drawDropoutRate(rng, space.dropoutRate) });
    return chain;
  }
  return null;
}

/** Puts `chain` on `edge`, in order: the edge's reader (or the head) reads the chain's last node. */
function insertChainOnEdge(genome: Genome, edge: Edge, chain: readonly LayerNode[]): Genome {
  let g = genome;
  let from = edge.from;
  for (const node of chain) {
    g = insertOnEdge(g, { from, to: edge.to }, node);
    from = node.id;
  }
  return g;
}

/** Inserts a new convolution block (on an image), convolution or recurrent block (on a sequence) or dense block (on a flat tensor) on a random edge. */
export const insertBlock: MutationOperator = (genome, ctx) => {
  const shapes = shapesOf(genome, ctx.data);
  if (!shapes) return null;
  const edge = ctx.rng.pick(edgesOf(genome));
  const chain = newBlock(genome, edge.from, shapes.get(edge.from)!, ctx);
  if (!chain) return null;
  const next = insertChainOnEdge(genome, edge, chain);
  return { genome: next, detail: `inserted block ${describeBlock(next, chain.map((n) => n.id))} on ${describeEdge(edge)}` };
};

/** Removes a random block whole; its readers read the block's input. */
export const removeBlock: MutationOperator = (genome, ctx) => {
  const blocks = blocksOf(genome);
  if (!blocks.length) return null;
  const ids = ctx.rng.pick(blocks);
  const input = byIds(genome, ids)[0]!.inputs[0]!;
  let g = genome;
  for (const id of [...ids].reverse()) g = bypassNode(g, id, g.nodes.find((n) => n.id === id)!.inputs[0]!);
  return { genome: g, detail: `removed block ${describeBlock(genome, ids)}; its readers now read ${input}` };
};

/** Puts a copy of a random block (same settings, new ids) right after itself: one block deeper. */
export const duplicateBlock: MutationOperator = (genome, ctx) => {
  const blocks = blocksOf(genome);
  if (!blocks.length) return null;
  const ids = ctx.rng.pick(blocks);
  const copies: LayerNode[] = [];
  let from = ids[ids.length - 1]!;
  for (const node of byIds(genome, ids)) {
    const id = freshId({ ...genome, nodes: [...genome.nodes, ...copies] }, node.kind);
    copies.push({ ...node, id, inputs: [from] } as LayerNode);
    from = id;
  }
  const next = insertChainAfter(genome, ids[ids.length - 1]!, copies);
  return { genome: next, detail: `duplicated block ${describeBlock(genome, ids)} as ${copies.map((n) => n.id).join(' → ')}` };
};

/** `n` with its width (units or filters) times `factor`, rounded and kept in the space's range; other kinds as they are. */
function scaledWidth(n: LayerNode, factor: number, ctx: GenomeContext): LayerNode {
  const width = widthOf(n);
  if (!width) return n;
  return { ...n, [width.field]: clamp(Math.max(1, Math.round(width.value * factor)), ctx.space[width.field]) } as LayerNode;
}

/**
 * Doubles or halves the width (units or filters) of every layer that has one at once (the genome's own and those
 * of its motifs), each rounded and clamped to the space's range: the whole network wider or
 * narrower. Tries the other direction when every layer is already at the bound.
 */
export const scaleWidths: MutationOperator = (genome, ctx) => {
  const width = (n: LayerNode) => widthOf(n)?.value ?? null;
  const all = [...genome.nodes, ...(genome.motifs ?? []).flatMap((m) => m.nodes)];
  if (!all.some((n) => width(n) !== null)) return null;
  const first = ctx.rng.chance(0.5) ? 2 : 0.5;
  for (const factor of [first, 1 / first]) {
    const scale = (nodes: LayerNode[]) => nodes.map((n) => scaledWidth(n, factor, ctx));
    const changed = all.filter((n) => width(n) !== width(scaledWidth(n, factor, ctx))).length;
    if (!changed) continue;
    const motifs = genome.motifs?.map((m) => ({ ...m, nodes: scale(m.nodes) }));
    return {
      genome: { ...genome, nodes: scale(genome.nodes), ...(motifs ? { motifs } : {}) },
      detail: `every layer width ×${factor === 2 ? '2' : '½'} (${changed} layer${changed === 1 ? '' : 's'} changed)`,
    };
  }
  return null;
};
