import type { EvaluationJob, EvaluationResult, LabelledSamples } from '@netbreeder/shared-types';
import type { Logger } from '../logger.js';
import type { EvaluationQueue } from '../queue/evaluation-queue.js';
import type { EvaluationRecord, RunRecord, RunStore } from '../store/run-store.js';
import { scoreChampion } from '../champion/score-champion.js';
import { exportChampion } from '../champion/export-champion.js';

/** One genome that gets the final training, and how it scored in the search. */
export interface ChampionCandidate {
  sourceEvaluationId: string;
  genomeHash: string;
  seq: number;
  valAccuracy: number;
}

export interface ChampionPhaseOptions {
  store: RunStore;
  queue: EvaluationQueue;
  log: Logger;
  dataDir: string;
  now: () => number;
  /** The run's held-out test split (only the coordinator has it). */
  testSplit: () => LabelledSamples;
  onFinished?: (run: RunRecord) => void;
  /** Whether a search result may give a candidate (not from a quarantined worker, not failed verification). @default every result */
  eligible?: (ev: EvaluationRecord) => boolean;
}

const championId = (runId: string, seq: number, attempt: number) => `${runId}-c${seq}-a${attempt}`;

/**
 * The end of a run: the best `champion.topK` distinct genomes of the search are trained again with
 * the champion budget on train + validation (each from the seed that earned its place), each is
 * scored on the held-out test split here on the coordinator, and the best of them is stored and
 * exported. Every step is in the store, so a restart picks up where it was.
 */
export class ChampionPhase {
  constructor(private readonly o: ChampionPhaseOptions) {}

  /** Chooses the candidates and queues their final trainings. */
  async begin(run: RunRecord): Promise<void> {
    const candidates = this.chooseCandidates(run);
    if (candidates.length === 0) {
      this.o.store.setRunState(run.id, 'failed', { now: this.o.now(), failure: 'no evaluation succeeded (or every successful one failed verification or came from a quarantined worker), so there is no champion' });
      this.o.log.error({ runId: run.id }, 'run ended without a single successful evaluation');
      return;
    }
    this.o.store.transaction(() => {
      this.o.store.setRunState(run.id, 'training-champion');
      this.o.store.logEvent(run.id, 'champion-candidates', { candidates });
    });
    this.o.log.info({ runId: run.id, candidates: candidates.length, best: candidates[0]!.valAccuracy }, 'search done; training the best genomes on train + validation');
    await this.ensureJobs(this.o.store.getRun(run.id)!);
  }

  /** The best distinct genomes by validation accuracy (then fewer parameters), from eligible results only. */
  chooseCandidates(run: RunRecord): ChampionCandidate[] {
    const k = run.config.champion.topK;
    const seen = new Set<string>();
    const out: ChampionCandidate[] = [];
    for (const e of this.o.store.topEvaluations(run.id, k * 10)) {
      if (seen.has(e.genomeHash) || (this.o.eligible && !this.o.eligible(e))) continue;
      seen.add(e.genomeHash);
      out.push({ sourceEvaluationId: e.id, genomeHash: e.genomeHash, seq: e.seq, valAccuracy: e.valAccuracy! });
      if (out.length === k) break;
    }
    return out;
  }

  candidates(runId: string): ChampionCandidate[] {
    const ev = this.o.store.events(runId, 'champion-candidates').at(-1);
    return ev ? (ev.detail as { candidates: ChampionCandidate[] }).candidates : [];
  }

  /** Queues each candidate's final training once (idempotent across restarts). */
  async ensureJobs(run: RunRecord): Promise<void> {
    const existing = new Set(this.o.store.evaluations(run.id).filter((e) => e.kind === 'champion').map((e) => e.seq));
    for (const c of this.candidates(run.id)) {
      if (existing.has(c.seq)) continue;
      const source = this.o.store.getEvaluation(c.sourceEvaluationId)!;
      const job: EvaluationJob = {
        ...source.job,
        kind: 'champion',
        attempt: 1,
        evaluationId: championId(run.id, c.seq, 1),
        // The same initial weights that earned the genome its place; only the data (train +
        // validation) and the budget change.
        seed: source.job.seed,
        budget: { epochs: run.config.champion.epochs, maxSeconds: run.config.champion.maxSeconds },
      };
      this.o.store.addEvaluation(job, c.seq, this.o.now(), false);
      await this.o.queue.add(job);
    }
    await this.finishIfComplete(run.id);
  }

  /** Scores one candidate's final training on the test split and keeps it if it is the best so far. */
  async recordResult(ev: EvaluationRecord, result: EvaluationResult): Promise<void> {
    const candidate = this.candidates(ev.runId).find((c) => c.seq === ev.seq);
    if (!candidate) throw new Error(`champion evaluation ${ev.id} is not for a candidate of run ${ev.runId}`);
    const score = await scoreChampion(result.model!, this.o.testSplit());
    const current = this.o.store.getChampion(ev.runId);
    const better = !current || score.accuracy > current.testAccuracy;
    const recorded = this.o.store.transaction(() => {
      if (this.o.store.recordResult(ev.id, result, this.o.now()) !== 'recorded') return false;
      const scored = {
        evaluationId: ev.id,
        sourceEvaluationId: candidate.sourceEvaluationId,
        genomeHash: ev.genomeHash,
        valAccuracy: candidate.valAccuracy,
        testAccuracy: score.accuracy,
        testLoss: score.loss,
      };
      this.o.store.logEvent(ev.runId, 'champion-candidate-scored', { ...scored, backend: score.backend, latencyMsPerSample: score.latencyMsPerSample });
      if (better) {
        this.o.store.saveChampion(
          { runId: ev.runId, ...scored, testPredictions: Array.from(score.predictions), result: { ...result, model: undefined }, createdAt: this.o.now() },
          JSON.stringify(result.model),
        );
      }
      return true;
    });
    if (!recorded) return;
    this.o.log.info({ evaluationId: ev.id, testAccuracy: score.accuracy, best: better }, 'champion candidate scored on the held-out test split');
    await this.finishIfComplete(ev.runId);
  }

  /** After a candidate's attempt was given up: the phase may be complete without it. */
  async attemptGivenUp(runId: string): Promise<void> {
    await this.finishIfComplete(runId);
  }

  /** Ends the run once every candidate has a final outcome: exported champion, or failure. */
  private async finishIfComplete(runId: string): Promise<void> {
    const run = this.o.store.getRun(runId)!;
    if (run.state !== 'training-champion') return;
    const champions = this.o.store.evaluations(runId).filter((e) => e.kind === 'champion');
    const open = this.candidates(runId).some((c) => {
      const attempts = champions.filter((e) => e.seq === c.seq);
      return attempts.length === 0 || attempts.some((e) => e.state === 'queued' || e.state === 'running');
    });
    if (open) return;
    const champion = this.o.store.getChampion(runId);
    if (!champion) {
      this.o.store.setRunState(runId, 'failed', { now: this.o.now(), failure: 'every champion training failed; see the events' });
      return;
    }
    this.o.store.setRunState(runId, 'finished', { now: this.o.now() });
    const finished = this.o.store.getRun(runId)!;
    const dir = await exportChampion(this.o.store, finished, `${this.o.dataDir}/runs/${runId}/champion`);
    this.o.store.logEvent(runId, 'champion-exported', { dir, testAccuracy: champion.testAccuracy });
    this.o.log.info({ runId, testAccuracy: champion.testAccuracy, dir }, 'champion exported');
    this.o.onFinished?.(finished);
  }
}
