/**
 * A search snapshot is stored without its members' genomes. Every member of every algorithm (a
 * population member, a rung member) is an observed evaluation, `{ evaluationId, genomeHash,
 * genome, … }`, whose genome is exactly the one in that evaluation's job, which the store already
 * holds. Storing the snapshot with each genome in it wrote the whole population again (about
 * 130 KB for 100 members) on every reconcile pass; without them it is a few KB.
 *
 * A stored member keeps its keys in order, with `genomeOfEvaluation: true` where `genome` was;
 * reading it back puts the evaluation's genome in that place, so the snapshot read is the snapshot
 * saved, key for key (replay compares the two as text).
 */
import { NetbreederError } from '@netbreeder/shared-types';

/** Marks a member whose genome is its evaluation's. */
const MARKER = 'genomeOfEvaluation';

type Json = unknown;

const isMember = (v: Record<string, unknown>): boolean =>
  typeof v.evaluationId === 'string' && typeof v.genomeHash === 'string' && v.genome !== null && typeof v.genome === 'object';

/** The snapshot with each member's genome replaced by the marker (a new value; the input is not changed). */
export function withoutMemberGenomes(value: Json): Json {
  if (Array.isArray(value)) return value.map(withoutMemberGenomes);
  if (!value || typeof value !== 'object') return value;
  const record = value as Record<string, unknown>;
  const member = isMember(record);
  const out: Record<string, unknown> = {};
  for (const [k, v] of Object.entries(record)) {
    if (member && k === 'genome') out[MARKER] = true;
    else out[k] = member ? v : withoutMemberGenomes(v);
  }
  return out;
}

/**
 * The snapshot with each marked member's genome put back from `genomeOf(evaluationId)`; throws when
 * the store has no such evaluation (a store edited by hand, or a bug), since the search cannot
 * resume without it.
 */
export function withMemberGenomes(value: Json, genomeOf: (evaluationId: string) => Json | undefined): Json {
  if (Array.isArray(value)) return value.map((v) => withMemberGenomes(v, genomeOf));
  if (!value || typeof value !== 'object') return value;
  const record = value as Record<string, unknown>;
  const marked = record[MARKER] === true && typeof record.evaluationId === 'string';
  const out: Record<string, unknown> = {};
  for (const [k, v] of Object.entries(record)) {
    if (marked && k === MARKER) {
      const genome = genomeOf(record.evaluationId as string);
      if (genome === undefined) throw new NetbreederError('NB_STORE_DAMAGED', `the stored search state names evaluation ${String(record.evaluationId)}, which the store does not hold; the run cannot resume from it`);
      out.genome = genome;
    } else out[k] = marked ? v : withMemberGenomes(v, genomeOf);
  }
  return out;
}
