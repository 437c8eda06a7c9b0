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
 * Records the user's pick of `genomeHash` as the champion of `runId`: allowed while the run
 * searches or is paused (the champion phase then trains that genome alone as the champion), and
 * only for a genome with a finished search result in the run (its best one is taken). Throws
 * {@link ChampionPickError}; a refused pick changes nothing.
 */
export function pickChampion(store: RunStore, runId: string, genomeHash: string, now: number): Extract<ChampionChoice, { by: 'pick' }> {
  const run = store.getRun(runId);
  if (!run) throw new ChampionPickError('not-a-result', `no run ${runId}`);
  if (run.state !== 'searching' && run.state !== 'paused') {
    throw new ChampionPickError('state', `run ${runId} is ${run.state}; pick the champion while it searches or is paused (pause it, pick, then finish or resume it)`);
  }
  const best = store
    .evaluations(runId)
    .filter((e) => e.kind === 'search' && e.state === 'done' && e.genomeHash === genomeHash && e.valAccuracy !== null)
    .sort((a, b) => b.valAccuracy! - a.valAccuracy! || a.seq - b.seq)[0];
  if (!best) throw new ChampionPickError('not-a-result', `genome ${genomeHash} has no finished search result in run ${runId}; pick one from GET /runs/${runId}/front`);
  const choice = { by: 'pick' as const, genomeHash, evaluationId: best.id, valAccuracy: best.valAccuracy! };
  store.logEvent(runId, 'champion-picked', { genomeHash, evaluationId: best.id, valAccuracy: best.valAccuracy! }, now);
  return choice;
}
