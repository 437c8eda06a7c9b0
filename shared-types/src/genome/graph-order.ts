import { INPUT_ID, type Genome, type LayerNode } from './genome-schema.js';

/** Ordering a genome's layer graph, and the structural problems that make it impossible. */

/** One structural problem, naming the node and how to fix it. */
export interface GenomeIssue {
  nodeId: string | null;
  message: string;
}

interface Visit {
  byId: Map<string, LayerNode>;
  state: Map<string, 'visiting' | 'done'>;
  order: LayerNode[];
  issues: GenomeIssue[];
}

/** Depth-first: puts `id`'s inputs, then `id`, on `order`; false (with the issue) on a cycle. `path`: the nodes being visited, outermost first. */
function visitNode(id: string, path: string[], v: Visit): boolean {
  if (id === INPUT_ID) return true;
  const s = v.state.get(id);
  if (s === 'done') return true;
  if (s === 'visiting') {
    v.issues.push({ nodeId: id, message: `cycle ${[...path.slice(path.indexOf(id)), id].join(' -> ')}; a genome must be acyclic` });
    return false;
  }
  v.state.set(id, 'visiting');
  const n = v.byId.get(id)!;
  path.push(id);
  for (const i of n.inputs) if (!visitNode(i, path, v)) return false;
  path.pop();
  v.state.set(id, 'done');
  v.order.push(n);
  return true;
}

/**
 * Orders the nodes so each comes after its inputs, or reports the cycle or dangling reference that
 * makes that impossible. Nodes that do not lead to the output are reported too: they would train
 * nothing.
 */
export function topologicalOrder(genome: Genome): { ok: true; order: LayerNode[] } | { ok: false; issues: GenomeIssue[] } {
  const issues: GenomeIssue[] = [];
  const byId = new Map<string, LayerNode>();
  for (const n of genome.nodes) {
    if (n.id === INPUT_ID) issues.push({ nodeId: n.id, message: `'${INPUT_ID}' is reserved for the dataset input; rename the node` });
    else if (byId.has(n.id)) issues.push({ nodeId: n.id, message: 'duplicate node id; give every node its own id' });
    else byId.set(n.id, n);
  }
  for (const n of genome.nodes) {
    for (const i of n.inputs) {
      if (i !== INPUT_ID && !byId.has(i)) issues.push({ nodeId: n.id, message: `input '${i}' is not a node of this genome` });
    }
    if (new Set(n.inputs).size !== n.inputs.length) issues.push({ nodeId: n.id, message: 'the same input is listed twice' });
  }
  if (genome.output !== INPUT_ID && !byId.has(genome.output)) {
    issues.push({ nodeId: null, message: `output '${genome.output}' is not a node of this genome` });
  }
  if (issues.length) return { ok: false, issues };

  const order: LayerNode[] = [];
  const state = new Map<string, 'visiting' | 'done'>();
  if (!visitNode(genome.output, [], { byId, state, order, issues })) return { ok: false, issues };
  for (const n of genome.nodes) {
    if (!state.has(n.id)) issues.push({ nodeId: n.id, message: 'node does not lead to the output; remove it or connect it' });
  }
  if (issues.length) return { ok: false, issues };
  return { ok: true, order };
}
