import { SEARCH_DECISION_VERSION, type SearchDecision } from '@netbreeder/shared-types';

/** Small builders of the search decisions the algorithms share (see `search-decision.ts` in shared-types). */

/** A member as a decision names it; a crowding distance of Infinity (a boundary member) becomes null, since JSON has no Infinity. */
export function decisionMember(m: { evaluationId: string; genomeHash: string; fitness: number }, extra: { cost?: number; front?: number; crowding?: number } = {}) {
  return {
    evaluationId: m.evaluationId,
    genomeHash: m.genomeHash,
    fitness: m.fitness,
    ...(extra.cost === undefined ? {} : { cost: extra.cost }),
    ...(extra.front === undefined ? {} : { front: extra.front }),
    ...(extra.crowding === undefined ? {} : { crowding: Number.isFinite(extra.crowding) ? extra.crowding : null }),
  };
}

/** An observation the algorithm did not use, and why. */
export function ignoredObservation(o: { evaluationId: string; genomeHash: string }, why: Extract<SearchDecision, { kind: 'observation-ignored' }>['why'], reason: string): SearchDecision {
  return { kind: 'observation-ignored', version: SEARCH_DECISION_VERSION, reason, evaluationId: o.evaluationId, genomeHash: o.genomeHash, why };
}
