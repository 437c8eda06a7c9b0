import type { Logger } from '../logger.js';
import { forgetResults, type SearchAlgorithm } from '../search/index.js';
import type { RunStore } from '../store/run-store.js';

/**
 * A worker was quarantined: its results leave the search's population (they no longer count for
 * selection; the champion phase skips them through `verifier.counts`). The forgetting is a step of
 * the search log (so a replay forgets the same results), saved with the algorithm's state in one
 * transaction, and logged with how many results left.
 */
export function forgetWorkerResults(o: { store: RunStore; log: Logger; now: number }, algorithm: SearchAlgorithm, workerId: string, runId: string): void {
  const reason = `worker ${workerId} was quarantined (its results failed verification): its results no longer count`;
  const decision = forgetResults(algorithm, (id) => o.store.getEvaluation(id)?.workerId === workerId, reason);
  const dropped = decision.kind === 'results-forgotten' ? decision.evaluationIds.length : 0;
  o.store.transaction(() => {
    o.store.addSearchStep({ runId, kind: 'forget', evaluationId: null, genomeHash: null, parentHashes: [], budgetEpochs: null, reason, decisions: [decision], at: o.now });
    o.store.saveSearchSnapshot(runId, algorithm.snapshot());
    o.store.logEvent(runId, 'quarantined-results-dropped', { workerId, droppedFromPopulation: dropped });
  });
  o.log.warn({ workerId, dropped }, 'results of a quarantined worker dropped from the search population');
}
