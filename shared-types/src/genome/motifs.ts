import { INPUT_ID, type Genome, type LayerNode, type Motif } from './genome-schema.js';
import { topologicalOrder, type GenomeIssue } from './graph-order.js';
import { NetbreederError } from '../errors/netbreeder-error.js';

/**
 * Repeated motifs: a genome defines a block once (`genome.motifs`) and `repeat` nodes apply it
 * several times in sequence. Everything that walks a genome's layers (analysis, model building,
 * layer counts) works on {@link expandMotifs}' result, so there is one expansion and no second copy
 * that can drift.
 *
 * Layer names: application k (from 1) of node `c` of the motif applied by repeat `r` is the layer
 * `r.k.c`. Genome ids cannot contain a dot, so these never collide with a genome's own node ids or
 * with the head's `head.*` layers, and they stay the same when an unrelated part of the genome
 * mutates (weight inheritance matches layers by name).
 */

/** The layer name of application `application` (from 1) of motif node `nodeId` in repeat `repeatId`. */
export const motifLayerName = (repeatId: string, application: number, nodeId: string): string => `${repeatId}.${application}.${nodeId}`;

/**
 * A motif's nodes seen as a genome of their own (same training genes): its `input` is the tensor the
 * motif is applied to. Lets the graph rules and the layer mutations work on a motif unchanged.
 */
export function motifAsGenome(genome: Genome, motif: Motif): Genome {
  return { schemaVersion: genome.schemaVersion, nodes: motif.nodes, output: motif.output, training: genome.training };
}

/** The genome's motifs by id. */
export const motifsById = (genome: Genome): Map<string, Motif> => new Map((genome.motifs ?? []).map((m) => [m.id, m] as const));

/**
 * The structural rules of motifs: every repeat names a motif of the genome, every motif is used,
 * ids are unique, a motif's nodes read only `input` or each other, its output is one of its nodes,
 * its graph is acyclic with every node leading to its output, and motifs do not nest. Shapes are
 * checked by `analyzeGenome` on the expansion: each application must accept the previous one's
 * output, so a motif may change the shape (a strided or pooling motif) as long as it can follow itself.
 */
export function motifIssues(genome: Genome): GenomeIssue[] {
  const motifs = genome.motifs ?? [];
  const repeats = genome.nodes.filter((n) => n.kind === 'repeat');
  if (!motifs.length && !repeats.length) return [];
  const issues: GenomeIssue[] = [];
  const byId = new Map<string, Motif>();
  for (const m of motifs) {
    if (byId.has(m.id)) issues.push({ nodeId: null, message: `motifs: the id '${m.id}' is used twice; give every motif its own id` });
    else byId.set(m.id, m);
  }
  const used = new Set<string>();
  for (const r of repeats) {
    used.add(r.motif);
    if (!byId.has(r.motif)) {
      const known = byId.size ? `one of [${[...byId.keys()].join(', ')}]` : 'a motif defined there';
      issues.push({ nodeId: r.id, message: `repeat names motif '${r.motif}', which is not in the genome's motifs; add it to motifs or name ${known}` });
    }
  }
  for (const m of byId.values()) {
    const where = `motif '${m.id}'`;
    if (!used.has(m.id)) issues.push({ nodeId: null, message: `${where} is used by no repeat node; remove it from motifs or apply it with a repeat node` });
    const ids = new Set(m.nodes.map((n) => n.id));
    let local = true;
    for (const n of m.nodes) {
      if (n.kind === 'repeat') issues.push({ nodeId: n.id, message: `${where} holds a repeat node, but motifs do not nest; apply the inner motif with a repeat outside` });
      for (const i of n.inputs) {
        if (i === INPUT_ID || ids.has(i)) continue;
        local = false;
        issues.push({ nodeId: n.id, message: `${where}: input '${i}' is not a node of the motif; inside a motif, nodes read '${INPUT_ID}' (the tensor the motif is applied to) or each other` });
      }
    }
    if (!ids.has(m.output)) {
      local = false;
      issues.push({ nodeId: null, message: `${where}: output '${m.output}' is not one of its nodes; name the node whose tensor an application gives` });
    }
    if (!local) continue;
    const order = topologicalOrder(motifAsGenome(genome, m));
    if (!order.ok) for (const i of order.issues) issues.push({ nodeId: i.nodeId, message: `${where}: ${i.message}` });
  }
  return issues;
}

/** How many layers the genome builds: its own nodes other than repeats, plus each repeat's motif nodes once per application. */
export function expandedLayerCount(genome: Genome): number {
  const motifs = motifsById(genome);
  let count = 0;
  for (const n of genome.nodes) count += n.kind === 'repeat' ? n.times * (motifs.get(n.motif)?.nodes.length ?? 0) : 1;
  return count;
}

export interface ExpandedGenome {
  /** The same network with every repeat replaced by its layers (ids `r.k.c`, see above); no motifs. */
  genome: Genome;
  /** For each repeat node, the expanded layer whose tensor it stands for (its last application's output). */
  repeatOutputs: ReadonlyMap<string, string>;
}

/**
 * The genome with every repeat node replaced by `times` copies of its motif in sequence, and every
 * reader of the repeat (a node or the head) reading the last copy's output. A genome without repeat
 * nodes is returned as it is (the same object). Pure. Expects motifs that pass {@link motifIssues};
 * throws on a repeat naming an unknown motif.
 */
export function expandMotifs(genome: Genome): ExpandedGenome {
  if (!genome.nodes.some((n) => n.kind === 'repeat')) return { genome, repeatOutputs: new Map() };
  const motifs = motifsById(genome);
  const repeatOutputs = new Map<string, string>();
  const nodes: LayerNode[] = [];
  for (const n of genome.nodes) {
    if (n.kind !== 'repeat') {
      nodes.push(n);
      continue;
    }
    const motif = motifs.get(n.motif);
    if (!motif) throw new NetbreederError('NB_INVALID_GENOME', `repeat '${n.id}' names motif '${n.motif}', which the genome does not define; check the genome with checkGenome first`);
    let entry = n.inputs[0]!;
    for (let k = 1; k <= n.times; k++) {
      const from = entry;
      const name = (id: string) => (id === INPUT_ID ? from : motifLayerName(n.id, k, id));
      for (const m of motif.nodes) nodes.push({ ...m, id: name(m.id), inputs: m.inputs.map(name) } as LayerNode);
      entry = name(motif.output);
    }
    repeatOutputs.set(n.id, entry);
  }
  const resolve = (id: string) => repeatOutputs.get(id) ?? id;
  const { motifs: _motifs, ...rest } = genome;
  return {
    genome: { ...rest, nodes: nodes.map((n) => (n.inputs.some((i) => repeatOutputs.has(i)) ? ({ ...n, inputs: n.inputs.map(resolve) } as LayerNode) : n)), output: resolve(genome.output) },
    repeatOutputs,
  };
}

/**
 * An issue found on the expansion, told in the genome's terms: one at layer `r.k.c` is reported on
 * repeat `r`, naming the application and the motif's node; others are returned as they are.
 */
export function issueInGenomeTerms(issue: GenomeIssue, genome: Genome): GenomeIssue {
  const parts = issue.nodeId?.split('.');
  if (!parts || parts.length !== 3) return issue;
  const [repeatId, k, nodeId] = parts as [string, string, string];
  const repeat = genome.nodes.find((n) => n.id === repeatId);
  const motif = repeat?.kind === 'repeat' ? repeat.motif : '?';
  const hint = k === '1' ? '' : `; each application reads the previous one's output, so motif '${motif}' must accept the shape it gives (or use times 1)`;
  return { nodeId: repeatId, message: `application ${k} of motif '${motif}', its node '${nodeId}': ${issue.message}${hint}` };
}
