import { analyzeGenome, INPUT_ID, type DataShape, type Genome, type LayerKind, type LayerNode, type SampleShape } from '@netbreeder/shared-types';

/**
 * Pure edits of a genome's layer graph. Every function returns a new genome and leaves its argument
 * untouched. An edge runs from a node (or the dataset input) to a consumer node, or to the implicit
 * classifier head (`to: null`, the edge named by `genome.output`).
 */
export interface Edge {
  from: string;
  /** The consuming node's id, or null for the classifier head. */
  to: string | null;
}

export const isMerge = (n: LayerNode): boolean => n.kind === 'add' || n.kind === 'concat';

/** Every edge of the graph, the head's edge last. */
export function edgesOf(genome: Genome): Edge[] {
  const out: Edge[] = [];
  for (const n of genome.nodes) for (const i of n.inputs) out.push({ from: i, to: n.id });
  out.push({ from: genome.output, to: null });
  return out;
}

export const describeEdge = (e: Edge): string => `${e.from} → ${e.to ?? 'head'}`;

/** Short id stems for new nodes, one per kind. */
const ID_STEMS: Record<LayerKind, string> = {
  dense: 'dense',
  conv2d: 'conv',
  'depthwise-conv2d': 'dwconv',
  'max-pool2d': 'maxpool',
  'avg-pool2d': 'avgpool',
  conv1d: 'tconv',
  'max-pool1d': 'tmaxpool',
  'avg-pool1d': 'tavgpool',
  lstm: 'lstm',
  gru: 'gru',
  dropout: 'drop',
  'batch-norm': 'bn',
  activation: 'act',
  flatten: 'flat',
  'global-avg-pool': 'gap',
  'global-max-pool': 'gmp',
  add: 'add',
  concat: 'cat',
  repeat: 'rep',
};

/** An id for a new node of `kind` that no node of `genome` uses: `conv1`, `conv2`, … (valid for the schema). */
export function freshId(genome: Genome, kind: LayerKind): string {
  const used = new Set(genome.nodes.map((n) => n.id));
  used.add(INPUT_ID);
  for (let k = 1; ; k++) {
    const id = `${ID_STEMS[kind]}${k}`;
    if (!used.has(id)) return id;
  }
}

/** Each node's output shape (and the input's), or null when the genome does not analyse. */
export function shapesOf(genome: Genome, data: DataShape): Map<string, SampleShape> | null {
  const result = analyzeGenome(genome, data);
  if (!result.ok) return null;
  const shapes = new Map<string, SampleShape>([[INPUT_ID, data.inputShape]]);
  for (const n of result.analysis.nodes) if (n.kind !== 'head-flatten' && n.kind !== 'head-dense') shapes.set(n.id, n.outputShape);
  return shapes;
}

/** Every id upstream of the given ids (themselves included), following inputs. */
function upstream(genome: Genome, start: readonly string[]): Set<string> {
  const byId = new Map(genome.nodes.map((n) => [n.id, n] as const));
  const seen = new Set<string>();
  const stack = [...start];
  while (stack.length) {
    const cur = stack.pop()!;
    if (seen.has(cur)) continue;
    seen.add(cur);
    for (const i of byId.get(cur)?.inputs ?? []) stack.push(i);
  }
  return seen;
}

/** Ids strictly upstream of node `id` (the dataset input included when reachable). */
export function ancestorsOf(genome: Genome, id: string): Set<string> {
  const node = genome.nodes.find((n) => n.id === id);
  return upstream(genome, node?.inputs ?? []);
}

/**
 * Puts `node` on `edge`: the edge's consumer (or the head) reads `node` instead of `edge.from`.
 * `node.inputs` must already name `edge.from`. The node is placed in the list after its last input,
 * which keeps the stored order readable (the order itself carries no meaning).
 */
export function insertOnEdge(genome: Genome, edge: Edge, node: LayerNode): Genome {
  const nodes = genome.nodes.map((n) =>
    n.id === edge.to ? ({ ...n, inputs: n.inputs.map((i) => (i === edge.from ? node.id : i)) } as LayerNode) : n,
  );
  const after = Math.max(-1, ...node.inputs.map((i) => nodes.findIndex((n) => n.id === i)));
  nodes.splice(after + 1, 0, node);
  return { ...genome, nodes, output: edge.to === null ? node.id : genome.output };
}

/** Drops every node that does not lead to the output, and every motif no remaining repeat applies. */
export function pruneDead(genome: Genome): Genome {
  const live = upstream(genome, [genome.output]);
  const nodes = genome.nodes.filter((n) => live.has(n.id));
  if (!genome.motifs) return { ...genome, nodes };
  const used = new Set(nodes.flatMap((n) => (n.kind === 'repeat' ? [n.motif] : [])));
  const { motifs, ...rest } = genome;
  const kept = motifs.filter((m) => used.has(m.id));
  return kept.length ? { ...rest, nodes, motifs: kept } : { ...rest, nodes };
}

/** Ids of the nodes that read `id`, plus `null` when the classifier head does. */
export function readersOf(genome: Genome, id: string): (string | null)[] {
  const out: (string | null)[] = genome.nodes.filter((n) => n.inputs.includes(id)).map((n) => n.id);
  if (genome.output === id) out.push(null);
  return out;
}

/**
 * Puts the chain `nodes` (each reading the one before, the first reading `after`) right after node
 * `after`: every reader of `after` (and the head, when it read it) reads the chain's last node instead.
 */
export function insertChainAfter(genome: Genome, after: string, nodes: readonly LayerNode[]): Genome {
  const last = nodes[nodes.length - 1]!.id;
  const rewired = genome.nodes.map((n) => (n.inputs.includes(after) ? ({ ...n, inputs: n.inputs.map((i) => (i === after ? last : i)) } as LayerNode) : n));
  const at = rewired.findIndex((n) => n.id === after);
  rewired.splice(at + 1, 0, ...nodes);
  return { ...genome, nodes: rewired, output: genome.output === after ? last : genome.output };
}

/** An id for a new motif that the genome's motifs do not use: `motif1`, `motif2`, … */
export function freshMotifId(genome: Genome): string {
  const used = new Set((genome.motifs ?? []).map((m) => m.id));
  for (let k = 1; ; k++) if (!used.has(`motif${k}`)) return `motif${k}`;
}

/**
 * Removes node `id` and rewires its consumers (and the head) to `replacement`. A merge that is left
 * with a repeated input keeps it once; a merge left with a single input is removed in turn. Nodes
 * that no longer lead to the output are pruned.
 */
export function bypassNode(genome: Genome, id: string, replacement: string): Genome {
  let g: Genome = {
    ...genome,
    nodes: genome.nodes.filter((n) => n.id !== id),
    output: genome.output === id ? replacement : genome.output,
  };
  g = {
    ...g,
    nodes: g.nodes.map((n) => (n.inputs.includes(id) ? ({ ...n, inputs: [...new Set(n.inputs.map((i) => (i === id ? replacement : i)))] } as LayerNode) : n)),
  };
  const degenerate = g.nodes.find((n) => isMerge(n) && n.inputs.length < 2);
  if (degenerate) return bypassNode(g, degenerate.id, degenerate.inputs[0]!);
  return pruneDead(g);
}
