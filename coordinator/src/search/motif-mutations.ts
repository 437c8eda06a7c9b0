import { INPUT_ID, maxRepeatsOf, motifAsGenome, type Genome, type LayerNode, type Motif, type SampleShape } from '@netbreeder/shared-types';
import type { GenomeContext } from './minimal-genome.js';
import { blocksOf } from './block-mutations.js';
import { describeEdge, edgesOf, freshId, freshMotifId, insertOnEdge, shapesOf } from './graph-edit.js';
import { addLayer, addSkip, changeActivation, changeKernelSize, changeStride, changeWidth, removeLayer, type MutationOperator } from './layer-mutations.js';

/**
 * Mutation operators on repeated motifs (a block defined once in `genome.motifs` and applied
 * several times by `repeat` nodes): the searched object is the motif and how often it is applied,
 * as in cell-based search spaces. Same contract as the layer operators. None applies when the
 * space does not allow `repeat`.
 */

/** The layer operators a motif's own nodes go through (the motif seen as a small genome of its own). */
const MOTIF_NODE_OPERATORS: readonly MutationOperator[] = [addLayer, removeLayer, changeWidth, changeKernelSize, changeStride, changeActivation, addSkip];

const allowsRepeats = (ctx: GenomeContext) => ctx.space.allowedKinds.includes('repeat');
const repeatsOf = (genome: Genome) => genome.nodes.filter((n): n is Extract<LayerNode, { kind: 'repeat' }> => n.kind === 'repeat');

/** Applies a random repeat's motif once more or once less, within 1 … the space's maxRepeats. */
export const changeRepeatCount: MutationOperator = (genome, ctx) => {
  const repeats = repeatsOf(genome);
  if (!repeats.length || !allowsRepeats(ctx)) return null;
  const node = ctx.rng.pick(repeats);
  const step = ctx.rng.chance(0.5) ? 1 : -1;
  for (const s of [step, -step]) {
    const times = node.times + s;
    if (times < 1 || times > maxRepeatsOf(ctx.space)) continue;
    return {
      genome: { ...genome, nodes: genome.nodes.map((n) => (n.id === node.id ? { ...node, times } : n)) },
      detail: `repeat ${node.id} of motif ${node.motif} ×${node.times} → ×${times}`,
    };
  }
  return null;
};

/**
 * A random motif of the genome, the shape its first repeat reads, and every tensor's shape; null
 * when the genome has no motif or does not analyse, or the space switches repeats off.
 */
function pickMotif(genome: Genome, ctx: GenomeContext): { motif: Motif; motifs: Motif[]; inputShape: SampleShape; shapes: Map<string, SampleShape> } | null {
  const motifs = genome.motifs;
  if (!motifs?.length || !allowsRepeats(ctx)) return null;
  const shapes = shapesOf(genome, ctx.data);
  if (!shapes) return null;
  const motif = ctx.rng.pick(motifs);
  const user = repeatsOf(genome).find((r) => r.motif === motif.id);
  return user ? { motif, motifs, inputShape: shapes.get(user.inputs[0]!)!, shapes } : null;
}

/**
 * Changes one motif with one of the layer operators (add or remove a layer, width, kernel size,
 * stride, activation, skip), applied to the motif seen as a genome whose input is the tensor its
 * first repeat reads. Every application of the motif changes with it.
 */
export const mutateMotif: MutationOperator = (genome, ctx) => {
  const picked = pickMotif(genome, ctx);
  if (!picked) return null;
  const { motif, motifs, inputShape } = picked;
  const result = ctx.rng.pick(MOTIF_NODE_OPERATORS)(motifAsGenome(genome, motif), { ...ctx, data: { ...ctx.data, inputShape } });
  if (!result || result.genome.output === INPUT_ID || !result.genome.nodes.length) return null;
  const changed: Motif = { id: motif.id, nodes: result.genome.nodes, output: result.genome.output };
  return { genome: { ...genome, motifs: motifs.map((m) => (m.id === motif.id ? changed : m)) }, detail: `in motif ${motif.id}: ${result.detail}` };
};

/**
 * Turns a random block of the genome's own nodes into a new motif applied once: the same layers
 * (renamed `r.1.*` when built), now a unit that the other motif operators can repeat and change.
 */
export const makeMotif: MutationOperator = (genome, ctx) => {
  if (!allowsRepeats(ctx)) return null;
  const blocks = blocksOf(genome);
  if (!blocks.length) return null;
  const ids = ctx.rng.pick(blocks);
  const inBlock = new Set(ids);
  const nodes = ids.map((id) => genome.nodes.find((n) => n.id === id)!);
  const entry = nodes[0]!.inputs[0]!;
  const last = ids[ids.length - 1]!;
  const motif: Motif = { id: freshMotifId(genome), nodes: nodes.map((n, i) => (i === 0 ? ({ ...n, inputs: [INPUT_ID] } as LayerNode) : n)), output: last };
  const repeat: LayerNode = { id: freshId(genome, 'repeat'), kind: 'repeat', inputs: [entry], motif: motif.id, times: 1 };
  const rest = genome.nodes.flatMap((n) => {
    if (n.id === ids[0]) return [repeat];
    if (inBlock.has(n.id)) return [];
    return [n.inputs.includes(last) ? ({ ...n, inputs: n.inputs.map((i) => (i === last ? repeat.id : i)) } as LayerNode) : n];
  });
  return {
    genome: { ...genome, nodes: rest, output: genome.output === last ? repeat.id : genome.output, motifs: [...(genome.motifs ?? []), motif] },
    detail: `made block ${ids.join(' → ')} into motif ${motif.id}, applied once by ${repeat.id}`,
  };
};

/** Applies an existing motif once more somewhere else: a new repeat (×1) on a random edge whose tensor has the rank the motif already reads. */
export const insertRepeat: MutationOperator = (genome, ctx) => {
  const picked = pickMotif(genome, ctx);
  if (!picked) return null;
  const { motif, inputShape, shapes } = picked;
  const edges = edgesOf(genome).filter((e) => shapes.get(e.from)!.length === inputShape.length);
  if (!edges.length) return null;
  const edge = ctx.rng.pick(edges);
  const node: LayerNode = { id: freshId(genome, 'repeat'), kind: 'repeat', inputs: [edge.from], motif: motif.id, times: 1 };
  return { genome: insertOnEdge(genome, edge, node), detail: `applied motif ${motif.id} once more as ${node.id} on ${describeEdge(edge)}` };
};
