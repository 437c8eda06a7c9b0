import { INPUT_ID, type Genome, type LayerNode } from './genome-schema.js';
import { topologicalOrder } from './graph-order.js';
import { motifAsGenome, motifIssues, motifsById } from './motifs.js';
import { sha256Hex } from '../sha256.js';
import { NetbreederError } from '../errors/netbreeder-error.js';

/** Rounds to 6 significant digits so that float noise never makes two equal genomes differ. */
const tidyNumber = (v: number): number => (Number.isInteger(v) ? v : Number(v.toPrecision(6)));

/** Object keys as JSON strings, quoted once each (genomes reuse a few dozen keys). */
const quotedKeys = new Map<string, string>();
const quoteKey = (k: string): string => {
  let q = quotedKeys.get(k);
  if (q === undefined) {
    q = JSON.stringify(k);
    if (quotedKeys.size < 10_000) quotedKeys.set(k, q);
  }
  return q;
};

/**
 * JSON with object keys sorted at every depth (undefined members left out, numbers tidied). Its
 * output is what genome hashes are made of, so it must never change: built with plain string
 * appends because it runs for every genome the search makes or checks.
 */
export function stableStringify(value: unknown): string {
  if (Array.isArray(value)) {
    let out = '[';
    for (let i = 0; i < value.length; i++) {
      if (i > 0) out += ',';
      out += stableStringify(value[i]) ?? '';
    }
    return `${out}]`;
  }
  if (value && typeof value === 'object') {
    const record = value as Record<string, unknown>;
    const keys = Object.keys(record).sort();
    let out = '{';
    let first = true;
    for (const k of keys) {
      const v = record[k];
      if (v === undefined) continue;
      if (!first) out += ',';
      first = false;
      out += `${quoteKey(k)}:${stableStringify(v)}`;
    }
    return `${out}}`;
  }
  if (typeof value === 'number') return JSON.stringify(tidyNumber(value));
  return JSON.stringify(value);
}

/** `order`'s nodes renamed `n0`, `n1`, … in that order (inputs alike), numbers tidied, a repeat's motif renamed by `motifName`. */
function renamedNodes(order: readonly LayerNode[], motifName: (id: string) => string): { nodes: LayerNode[]; rename: Map<string, string> } {
  const rename = new Map<string, string>([[INPUT_ID, INPUT_ID]]);
  order.forEach((n, i) => rename.set(n.id, `n${i}`));
  const nodes = order.map((n) => {
    const copy: Record<string, unknown> = {};
    for (const [k, v] of Object.entries(n)) copy[k] = typeof v === 'number' ? tidyNumber(v) : v;
    copy.id = rename.get(n.id);
    copy.inputs = n.inputs.map((i) => rename.get(i)!);
    if (n.kind === 'repeat') copy.motif = motifName(n.motif);
    return copy as LayerNode;
  });
  return { nodes, rename };
}

/**
 * The canonical form of a structurally valid genome: nodes in the depth-first post-order reached
 * from the output, renamed `n0`, `n1`, … in that order, numbers rounded to 6 significant digits.
 * Two genomes that describe the same network get the same canonical form whatever their node ids
 * or node order. Motifs are part of it: each used motif canonicalised the same way (its own `n0`,
 * `n1`, …) and renamed `m0`, `m1`, … in the order repeats first use them; a genome without repeats
 * has no `motifs` field, so its form (and hash) is what it was before motifs existed. A motif
 * applied once and the same block written out inline are different genomes (they mutate
 * differently) and hash differently. Throws when the genome has a cycle, a dangling reference or a
 * broken motif.
 */
export function canonicalGenome(genome: Genome): Genome {
  const topo = topologicalOrder(genome);
  if (!topo.ok) throw new NetbreederError('NB_INVALID_GENOME', `cannot canonicalise an invalid genome: ${topo.issues.map((i) => i.message).join('; ')}`);
  const motifProblems = motifIssues(genome);
  if (motifProblems.length) throw new NetbreederError('NB_INVALID_GENOME', `cannot canonicalise an invalid genome: ${motifProblems.map((i) => i.message).join('; ')}`);
  const motifNames = new Map<string, string>();
  for (const n of topo.order) if (n.kind === 'repeat' && !motifNames.has(n.motif)) motifNames.set(n.motif, `m${motifNames.size}`);
  const own = renamedNodes(topo.order, (id) => motifNames.get(id)!);
  const training = Object.fromEntries(
    Object.entries(genome.training).map(([k, v]) => [k, typeof v === 'number' ? tidyNumber(v) : v]),
  ) as Genome['training'];
  const canonical: Genome = { schemaVersion: genome.schemaVersion, nodes: own.nodes, output: own.rename.get(genome.output)!, training };
  if (motifNames.size) {
    const motifs = motifsById(genome);
    canonical.motifs = [...motifNames].map(([id, name]) => {
      const motif = motifs.get(id)!;
      const order = topologicalOrder(motifAsGenome(genome, motif));
      const inner = renamedNodes(order.ok ? order.order : motif.nodes, (m) => m);
      return { id: name, nodes: inner.nodes, output: inner.rename.get(motif.output)! };
    });
  }
  return canonical;
}

/** sha256 of the canonical form, as 64 hex digits: equal networks get equal hashes. */
export function genomeHash(genome: Genome): string {
  return sha256Hex(stableStringify(canonicalGenome(genome)));
}
