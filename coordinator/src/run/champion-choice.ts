import type { ChampionRule } from '@netbreeder/shared-types';
import type { RunRecord, RunStore } from '../store/run-store.js';

/**
 * How a run's champion is chosen: a genome the user `pick`ed, the best under the run file's
 * `champion.rule`, or (neither given) the best of the search. The champion phase records the
 * choice with its candidates, so the report says which one chose it.
 */
export type ChampionChoice =
  | { by: 'pick'; genomeHash: string; evaluationId: string; valAccuracy: number }
  | { by: 'rule'; rule: ChampionRule }
  | { by: 'best'; note?: string };

/** Why a pick was refused: the run's state does not allow it, or the genome is no finished search result of the run. */
export class ChampionPickError extends Error {
  override name = 'ChampionPickError';
  constructor(
    readonly reason: 'state' | 'not-a-result',
    message: string,
  ) {
    super(message);
  }
}

/** True when a result of this size and cost meets every limit of `rule`; an unknown latency cannot meet a latency limit. */
export function meetsRule(rule: ChampionRule, e: { params: number; flops: number; latencyMs: number | null }): boolean {
  if (rule.maxParams !== undefined && e.params > rule.maxParams) return false;
  if (rule.maxFlops !== undefined && e.flops > rule.maxFlops) return false;
  if (rule.maxLatencyMs !== undefined && (e.latencyMs === null || e.latencyMs > rule.maxLatencyMs)) return false;
  return true;
}

/** `at most 5,000 parameters and 2 ms per sample` */
export function describeRule(rule: ChampionRule): string {
  const parts = [
    rule.maxParams === undefined ? null : `at most ${rule.maxParams.toLocaleString('en-US')} parameters`,
    rule.maxFlops === undefined ? null : `at most ${rule.maxFlops.toLocaleString('en-US')} FLOPs per sample`,
    rule.maxLatencyMs === undefined ? null : `at most ${rule.maxLatencyMs} ms per sample alone on a worker's CPU`,
  ].filter((p): p is string => p !== null);
  return parts.join(' and ');
}

/** One sentence for the report: which choice made the champion. */
export function describeChoice(choice: ChampionChoice): string {
  if (choice.by === 'pick') {
    return `Picked by the user: genome \`${choice.genomeHash.slice(0, 12)}\` (its best search result, evaluation ${choice.evaluationId}, validation ${(choice.valAccuracy * 100).toFixed(2)}%), trained again and scored once on the test split.`;
  }
  if (choice.by === 'rule') return `By the run's champion rule: the best validation accuracy among results with ${describeRule(choice.rule)}.`;
  return `The best validation accuracy of the search${choice.note ? ` (${choice.note})` : ''}.`;
}

/** How the champion of `runId` was chosen, as recorded when its champion phase began (runs from before this record: the best). */
export function recordedChoice(store: RunStore, runId: string): ChampionChoice {
  const ev = store.events(runId, 'champion-candidates').at(-1);
  return (ev?.detail as { choice?: ChampionChoice } | undefined)?.choice ?? { by: 'best' };
}

/** The choice in force for `run`: its latest pick, else its rule, else the best. */
export function championChoice(store: RunStore, run: RunRecord): ChampionChoice {
  const pick = store.events(run.id, 'champion-picked').at(-1);
  if (pick) return { by: 'pick', ...(pick.detail as { genomeHash: string; evaluationId: string; valAccuracy: number }) };
  return run.config.champion.rule ? { by: 'rule', rule: run.config.champion.rule } : { by: 'best' };
}

/**
 * Records the user's pick of `genomeHash` as the champion of `runId`, for a genome with a finished
 * search result in the run (its best one is taken). While the run searches or is paused, the
 * champion phase will train that genome alone as the champion. Once the run has finished, a new
 * champion round starts at once: the run goes back to `training-champion`, the picked genome gets
 * its final training, replaces the champion and is exported (the ensemble stays as it was); this
 * needs the coordinator that drives the run (`drivenRunId`), since it queues the training.
 * Throws {@link ChampionPickError}; a refused pick changes nothing.
 */
export function pickChampion(store: RunStore, runId: string, genomeHash: string, now: number, drivenRunId: string | null = null): PickOutcome {
  const run = store.getRun(runId);
  if (!run) throw new ChampionPickError('not-a-result', `no run ${runId}`);
  const retrain = run.state === 'finished';
  if (run.state !== 'searching' && run.state !== 'paused' && !retrain) {
    throw new ChampionPickError('state', `run ${runId} is ${run.state}; pick the champion while it searches or is paused, or once it has finished`);
  }
  if (retrain && drivenRunId !== runId) {
    throw new ChampionPickError('state', `run ${runId} has finished and this coordinator no longer drives it (it was restarted since, or drives another run); a pick after the end needs the coordinator that ran it`);
  }
  const best = store
    .evaluations(runId)
    .filter((e) => e.kind === 'search' && e.state === 'done' && e.genomeHash === genomeHash && e.valAccuracy !== null)
    .sort((a, b) => b.valAccuracy! - a.valAccuracy! || a.seq - b.seq)[0];
  if (!best) throw new ChampionPickError('not-a-result', `genome ${genomeHash} has no finished search result in run ${runId}; pick one from GET /runs/${runId}/front`);
  const choice = { by: 'pick' as const, genomeHash, evaluationId: best.id, valAccuracy: best.valAccuracy! };
  store.transaction(() => {
    store.logEvent(runId, 'champion-picked', { genomeHash, evaluationId: best.id, valAccuracy: best.valAccuracy! }, now);
    if (!retrain) return;
    // A new round of the champion phase with the picked genome alone. Its key (`seq`) is past every
    // proposal and every earlier round, so its final training gets evaluation ids of its own.
    const round = store.events(runId, 'champion-candidates').length;
    const candidate = { sourceEvaluationId: best.id, genomeHash, seq: run.proposals + round - 1, valAccuracy: best.valAccuracy!, champion: true };
    store.setRunState(runId, 'training-champion', { now });
    store.logEvent(runId, 'champion-candidates', { candidates: [candidate], choice, round }, now);
  });
  return { ...choice, retraining: retrain };
}

/** An accepted pick; `retraining` when the run had finished and the picked genome is being trained as the new champion. */
export type PickOutcome = Extract<ChampionChoice, { by: 'pick' }> & { retraining: boolean };

/** The champion round `runId` is in: 0 for the first, one more for each pick after the run finished. */
export const championRound = (store: RunStore, runId: string): number => Math.max(0, store.events(runId, 'champion-candidates').length - 1);
