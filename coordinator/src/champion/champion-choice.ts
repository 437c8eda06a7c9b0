import { fitnessInWords, NetbreederError, type ChampionChoice, type ChampionRule, type EnsembleSettings } from '@netbreeder/shared-types';
import type { EvaluationRecord, RunRecord, RunStore } from '../store/run-store.js';
import { selectEnsemble, type EnsemblePick } from './ensemble-selection.js';
import { rankByValidation } from './validation-evidence.js';

/**
 * How a run's champion is chosen: a genome the user `pick`ed, the best under the run file's
 * `champion.rule`, or (neither given) the best of the search. The champion phase records the
 * choice with its candidates, so the report says which one chose it.
 */
export type { ChampionChoice };

/** Why a pick or an ensemble request was refused: the run's state does not allow it, or the run has no such finished search result. */
export class ChampionChoiceError extends NetbreederError {
  constructor(
    readonly reason: 'state' | 'not-a-result',
    message: string,
  ) {
    super(reason === 'state' ? 'NB_RUN_STATE' : 'NB_NOT_A_RESULT', message);
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

/** One sentence for the report: which choice made the champion (a regression run's scores as validation RMSE in the target's units, `target` its scaling). */
export function describeChoice(choice: ChampionChoice, target?: { std: number }): string {
  if (choice.by === 'pick') {
    return `Picked by the user: genome \`${choice.genomeHash.slice(0, 12)}\` (its best search result, evaluation ${choice.evaluationId}, validation ${fitnessInWords(choice.valAccuracy, target)}), trained again and scored once on the test split.`;
  }
  if (choice.by === 'rule') return `By the run's champion rule: the best validation ${target ? 'RMSE' : 'accuracy'} among results with ${describeRule(choice.rule)}.`;
  return `The best validation evidence of the search${choice.note ? ` (${choice.note})` : ''}.`;
}

/** How the champion of `runId` was chosen, as recorded when its champion phase began (runs from before this record: the best). */
export function recordedChoice(store: RunStore, runId: string): ChampionChoice {
  const ev = store.events(runId, 'champion-candidates').at(-1);
  return ev?.detail.choice ?? { by: 'best' };
}

/** The choice in force for `run`: its latest pick, else its rule, else the best. */
export function championChoice(store: RunStore, run: RunRecord): ChampionChoice {
  const pick = store.events(run.id, 'champion-picked').at(-1);
  if (pick) return { by: 'pick', ...pick.detail };
  return run.config.champion.rule ? { by: 'rule', rule: run.config.champion.rule } : { by: 'best' };
}

/**
 * Records the user's pick of `genomeHash` as the champion of `runId`, for a genome with a finished
 * search result in the run (its best one is taken). While the run searches or is paused, the
 * champion phase will train that genome alone as the champion. Once the run has finished, a new
 * champion round starts at once: the run goes back to `training-champion`, the picked genome gets
 * its final training, replaces the champion and is exported (the ensemble stays as it was); this
 * needs the coordinator that drives the run (`drivenRunId`), since it queues the training.
 * Throws {@link ChampionChoiceError}; a refused pick changes nothing.
 */
export function pickChampion(store: RunStore, runId: string, genomeHash: string, now: number, drivenRunId: string | null = null): PickOutcome {
  const run = store.getRun(runId);
  if (!run) throw new ChampionChoiceError('not-a-result', `no run ${runId}`);
  const retrain = run.state === 'finished';
  if (run.state !== 'searching' && run.state !== 'paused' && !retrain) {
    throw new ChampionChoiceError('state', `run ${runId} is ${run.state}; pick the champion while it searches or is paused, or once it has finished`);
  }
  if (retrain && drivenRunId !== runId) {
    throw new ChampionChoiceError('state', `run ${runId} has finished and this coordinator no longer drives it (it was restarted since, or drives another run); a pick after the end needs the coordinator that ran it`);
  }
  const best = store
    .evaluations(runId)
    .filter((e) => e.kind === 'search' && e.state === 'done' && e.genomeHash === genomeHash && e.valAccuracy !== null)
    .sort((a, b) => b.valAccuracy! - a.valAccuracy! || a.seq - b.seq)[0];
  if (!best) throw new ChampionChoiceError('not-a-result', `genome ${genomeHash} has no finished search result in run ${runId}; pick one from GET /runs/${runId}/front`);
  const choice = { by: 'pick' as const, genomeHash, evaluationId: best.id, valAccuracy: best.valAccuracy! };
  store.transaction(() => {
    store.logEvent(runId, 'champion-picked', { genomeHash, evaluationId: best.id, valAccuracy: best.valAccuracy! }, now);
    if (!retrain) return;
    // A new round of the champion phase with the picked genome alone, under a key of its own.
    const round = store.events(runId, 'champion-candidates').length;
    const candidate = { sourceEvaluationId: best.id, genomeHash, seq: nextChampionSeq(store, run), valAccuracy: best.valAccuracy!, champion: true };
    store.setRunState(runId, 'training-champion', { now });
    store.logEvent(runId, 'champion-candidates', { candidates: [candidate], choice, round }, now);
  });
  return { ...choice, retraining: retrain };
}

/** An accepted pick; `retraining` when the run had finished and the picked genome is being trained as the new champion. */
export type PickOutcome = Extract<ChampionChoice, { by: 'pick' }> & { retraining: boolean };

/** The champion round `runId` is in: 0 for the first, one more for each pick after the run finished. */
export const championRound = (store: RunStore, runId: string): number => Math.max(0, store.events(runId, 'champion-candidates').length - 1);

/**
 * The key (`seq`) of a final training in a later champion round: past every proposal and every
 * earlier final training, so its evaluation ids are its own.
 */
export function nextChampionSeq(store: RunStore, run: RunRecord): number {
  const used = store.evaluations(run.id, 'champion').map((e) => e.seq + 1);
  return Math.max(run.proposals, ...used);
}

/** A search result the champion phase may choose from. */
export type PoolEntry = ReturnType<RunStore['topEvaluations']>[number] & { results?: number };

/**
 * The distinct genomes the champion (and the ensemble) may come from, best validation evidence
 * first (see {@link rankByValidation}: each genome's results at its largest budget, their mean
 * validation accuracy, then fewer parameters): under the run's rule if it has one, and at most
 * `want` of them. Reads validation scores only.
 * `ruleUnmet`: the rule left nothing, so the pool is the best overall. Results `eligible` refuses
 * (a quarantined worker's, one verification rejected) never enter it.
 */
export function candidatePool(
  store: RunStore,
  run: RunRecord,
  want: number,
  eligible: (ev: EvaluationRecord) => boolean = () => true,
): { pool: PoolEntry[]; ruleUnmet: boolean } {
  const rule = run.config.champion.rule;
  const distinct = (rows: PoolEntry[]): PoolEntry[] => rankByValidation(rows).slice(0, want);
  // A rule may leave out most results, so it reads further down the ranking.
  const ranked = store.topEvaluations(run.id, rule ? 100_000 : want * 10).filter(eligible);
  if (!rule) return { pool: distinct(ranked), ruleUnmet: false };
  const pool = distinct(ranked.filter((e) => meetsRule(rule, { params: e.params, flops: e.flops, latencyMs: e.result?.latencyMsPerSample ?? null })));
  return pool.length ? { pool, ruleUnmet: false } : { pool: distinct(ranked), ruleUnmet: true };
}

/** The ensemble's members from a pool by the greedy accuracy-and-diversity rule, with the pool entry of each. */
export function ensembleFromPool(pool: readonly PoolEntry[], settings: EnsembleSettings): Array<EnsemblePick & { entry: PoolEntry }> {
  const picks = selectEnsemble(
    pool.map((e) => ({ id: e.id, genomeHash: e.genomeHash, genome: e.genome, accuracy: e.valAccuracy! })),
    settings.size,
    settings.diversityPenalty,
  );
  return picks.map((p) => ({ ...p, entry: pool.find((e) => e.id === p.id)! }));
}

/** Pool size the phase reads for an ensemble of `size`: ten candidates per member. */
export const ensemblePoolSize = (size: number): number => size * 10;

/**
 * Starts a champion round that trains a new averaging ensemble for a finished run (the champion
 * stays): the members are chosen from the run's results as at the end of a run, trained again,
 * scored together on the test split and exported. Needs the coordinator driving the run.
 */
export function requestEnsemble(store: RunStore, runId: string, settings: EnsembleSettings, now: number, drivenRunId: string | null): { round: number; members: Array<{ genomeHash: string; valAccuracy: number; similarity: number }> } {
  const run = store.getRun(runId);
  if (!run) throw new ChampionChoiceError('not-a-result', `no run ${runId}`);
  if (run.state !== 'finished') throw new ChampionChoiceError('state', `run ${runId} is ${run.state}; an ensemble can be asked of a finished run (or set champion.ensemble in the run file)`);
  if (drivenRunId !== runId) throw new ChampionChoiceError('state', `this coordinator no longer drives run ${runId} (it was restarted since, or drives another run); ask the coordinator that ran it`);
  const members = ensembleFromPool(candidatePool(store, run, ensemblePoolSize(settings.size)).pool, settings);
  if (members.length < 2) throw new ChampionChoiceError('not-a-result', `run ${runId} has ${members.length} distinct finished genome(s); an ensemble needs two`);
  const base = nextChampionSeq(store, run);
  const round = store.events(runId, 'champion-candidates').length;
  const candidates = members.map((m, i) => ({
    sourceEvaluationId: m.id,
    genomeHash: m.genomeHash,
    seq: base + i,
    valAccuracy: m.accuracy,
    champion: false,
    ensemblePosition: i,
    ensembleSimilarity: m.similarity,
  }));
  store.transaction(() => {
    store.clearEnsembleMembers(runId);
    store.setRunState(runId, 'training-champion', { now });
    store.logEvent(runId, 'champion-candidates', { candidates, choice: recordedChoice(store, runId), round, ensemble: settings }, now);
  });
  return { round, members: members.map((m) => ({ genomeHash: m.genomeHash, valAccuracy: m.accuracy, similarity: m.similarity })) };
}
