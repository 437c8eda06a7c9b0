import { INPUT_ID, type Genome, type LayerNode } from './genome-schema.js';
import { topologicalOrder } from './analyze.js';
import { sha256Hex } from '../sha256.js';

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

/**
 * The canonical form of a structurally valid genome: nodes in the depth-first post-order reached
 * from the output, renamed `n0`, `n1`, … in that order, numbers rounded to 6 significant digits.
 * Two genomes that describe the same network get the same canonical form whatever their node ids
 * or node order. Throws when the genome has a cycle or a dangling reference.
 */
export function canonicalGenome(genome: Genome): Genome {
  const topo = topologicalOrder(genome);
  if (!topo.ok) throw new Error(`cannot canonicalise an invalid genome: ${topo.issues.map((i) => i.message).join('; ')}`);
  const rename = new Map<string, string>([[INPUT_ID, INPUT_ID]]);
  topo.order.forEach((n, i) => rename.set(n.id, `n${i}`));
  const nodes = topo.order.map((n) => {
    const copy: Record<string, unknown> = {};
    for (const [k, v] of Object.entries(n)) copy[k] = typeof v === 'number' ? tidyNumber(v) : v;
    copy.id = rename.get(n.id);
    copy.inputs = n.inputs.map((i) => rename.get(i)!);
    return copy as LayerNode;
  });
  const training = Object.fromEntries(
    Object.entries(genome.training).map(([k, v]) => [k, typeof v === 'number' ? tidyNumber(v) : v]),
  ) as Genome['training'];
  return { schemaVersion: genome.schemaVersion, nodes, output: rename.get(genome.output)!, training };
}

/** sha256 of the canonical form, as 64 hex digits: equal networks get equal hashes. */
export function genomeHash(genome: Genome): string {
  return sha256Hex(stableStringify(canonicalGenome(genome)));
}
