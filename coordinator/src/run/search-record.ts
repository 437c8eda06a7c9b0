import { SEARCH_DECISION_VERSION, type EvaluationResult, type SearchDecision, type SearchStep } from '@netbreeder/shared-types';
import type { Observation, Proposal } from '../search/index.js';
import type { EvaluationRecord } from '../store/run-store.js';

/**
 * The rows of the search's decision log (table `search_steps`), built in one place so that the
 * run manager writes them and replay reads them the same way.
 */
export type NewSearchStep = Omit<SearchStep, 'step'>;

/** What the algorithm is told about a recorded search result; replay rebuilds the same from the store. */
export function observationFor(ev: EvaluationRecord, result: EvaluationResult): Observation {
  return {
    evaluationId: ev.id,
    genomeHash: ev.genomeHash,
    genome: ev.job.genome,
    fitness: result.valAccuracy!,
    budgetEpochs: ev.job.budget.epochs,
    params: result.paramCount,
    flops: result.flops,
    ...(result.latencyMsPerSample === undefined ? {} : { latency: result.latencyMsPerSample }),
    trainSeconds: result.trainSeconds,
  };
}

/** A `propose` call (`evaluationId` null when the proposal was refused and never queued) or a user's `submit`ted genome. */
export function proposalStep(runId: string, kind: 'propose' | 'submit', evaluationId: string | null, proposal: Proposal, at: number): NewSearchStep {
  return {
    runId,
    kind,
    evaluationId,
    genomeHash: proposal.genomeHash,
    parentHashes: proposal.parentHashes,
    budgetEpochs: proposal.budgetEpochs ?? null,
    reason: proposal.reason,
    decisions: proposal.decisions ?? [],
    at,
  };
}

/** An `observe` call with what the algorithm did with the result (the reasons are in its decisions). */
export function observeStep(runId: string, o: Observation, decisions: SearchDecision[], at: number): NewSearchStep {
  return { runId, kind: 'observe', evaluationId: o.evaluationId, genomeHash: o.genomeHash, parentHashes: [], budgetEpochs: o.budgetEpochs ?? null, reason: '', decisions, at };
}

/** The coordinator refused a genome or a result (the algorithm was not asked). */
export function rejectStep(
  runId: string,
  subject: 'genome' | 'result',
  target: { evaluationId: string | null; genomeHash: string | null },
  issues: string[],
  at: number,
): NewSearchStep {
  const reason = `${subject === 'genome' ? 'genome' : 'result'} refused: ${issues.join('; ')}`;
  const decision: SearchDecision = { kind: 'rejected', version: SEARCH_DECISION_VERSION, reason, subject, evaluationId: target.evaluationId, genomeHash: target.genomeHash, issues: issues.slice(0, 50).map((i) => i.slice(0, 2000)) };
  return { runId, kind: 'reject', evaluationId: target.evaluationId, genomeHash: target.genomeHash, parentHashes: [], budgetEpochs: null, reason, decisions: [decision], at };
}
