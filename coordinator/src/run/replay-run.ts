import { replaySearch, type RecordedCall, type ReplayReport } from '../search/index.js';
import type { RunStore } from '../store/run-store.js';
import { observationFor } from './search-record.js';
import { searchContextOf } from './search-context.js';
import { NetbreederError } from '@netbreeder/shared-types';

/**
 * Replays a stored run's search (see {@link replaySearch}): the algorithm is made again from the
 * run's configuration and seed and given the stored results in the recorded order. Reads the store
 * only; throws when there is no such run.
 */
export function replayRun(store: RunStore, runId: string): ReplayReport & { runId: string; algorithm: string; steps: number } {
  // One read transaction: a consistent view even while a coordinator is writing the run.
  const { run, calls, storedSnapshot } = store.transaction(() => {
    const run = store.getRun(runId);
    if (!run) throw new NetbreederError('NB_NO_RUN', `no run ${runId} in this store; 'netbreeder runs' lists them`);
    const steps = store.searchSteps(runId);
    if (steps.length === 0 && run.proposals > 0) {
      throw new NetbreederError('NB_REPLAY_UNAVAILABLE', `run ${runId} has no decision log: it was recorded by a coordinator older than the log (store migration 5), so it cannot be replayed`);
    }
    // Stored decisions went through JSON.stringify, so stringifying what was parsed gives back the stored text.
    const calls = steps.map((s): RecordedCall => {
      if (s.kind === 'propose') return { step: s.step, kind: 'propose', genomeHash: s.genomeHash!, parentHashes: s.parentHashes, budgetEpochs: s.budgetEpochs, decisionsJson: JSON.stringify(s.decisions) };
      if (s.kind === 'observe') {
        const ev = store.getEvaluation(s.evaluationId!);
        if (!ev?.result) throw new NetbreederError('NB_STORE_DAMAGED', `step ${s.step} observed evaluation ${s.evaluationId}, which has no stored result; the store is damaged`);
        return { step: s.step, kind: 'observe', observation: observationFor(ev, ev.result), decisionsJson: JSON.stringify(s.decisions) };
      }
      if (s.kind === 'forget') {
        const gone = s.decisions.find((d) => d.kind === 'results-forgotten');
        return { step: s.step, kind: 'forget', evaluationIds: gone?.kind === 'results-forgotten' ? gone.evaluationIds : [], reason: s.reason, decisionsJson: JSON.stringify(s.decisions) };
      }
      return { step: s.step, kind: 'skip' };
    });
    return { run, calls, storedSnapshot: store.searchSnapshot(runId) };
  });
  const { algorithm, ...settings } = run.config.search;
  const report = replaySearch({
    algorithm,
    settings,
    context: searchContextOf(run),
    calls,
    storedSnapshot: storedSnapshot ?? undefined,
  });
  return { runId, algorithm, steps: calls.length, ...report };
}
