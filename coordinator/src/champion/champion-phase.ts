import { InternalError, type EvaluationJob, type EvaluationResult, type LabelledSamples, type ModelArtifactsMessage } from '@netbreeder/shared-types';
import type { Logger } from '../logger.js';
import type { EvaluationQueue } from '../queue/evaluation-queue.js';
import type { EvaluationRecord, RunRecord, RunStore } from '../store/run-store.js';
import { scoreChampion } from './score-champion.js';
import { exportChampion } from './export-champion.js';
import { scoreEnsemble } from './score-ensemble.js';
import { candidatePool, championChoice, championRound, describeRule, ensembleFromPool, ensemblePoolSize, type ChampionChoice } from './champion-choice.js';
import { finalTrainingLength } from './final-length.js';
import { referenceSource, type ConsideredGenome } from './reference-comparison.js';
import { heldBackCount, heldBackPair, heldBackSide, heldBackWinner } from './held-back-check.js';
import { onnxExportOf } from './onnx-file.js';
import { searchWeights } from '../checkpoints/checkpoint-policy.js';
import { measureOnnxLatency, type OnnxLatency, type OnnxLatencyUnavailable } from '../onnx/onnx-latency.js';

/** One genome that gets the final training, and how it scored in the search. */
/** A genome the champion phase trains again (the `champion-candidates` event's schema). */
import type { ChampionCandidate } from '@netbreeder/shared-types';
export type { ChampionCandidate };

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
 * The end of a run: the champion is chosen on validation evidence alone (a pick, else the best
 * under the run's rule, else the best of the search; see `candidatePool`), then trained again on
 * train + validation (from the seed that earned its place, for as many epochs as its learning curve
 * says: `final-length.ts`), scored ONCE on the held-out test split here on the coordinator, stored
 * and exported. The run's reference network gets the same final training and its one test score
 * for the comparison (`reference-comparison.ts`); ensemble members too. No choice reads a test
 * score. Every step is in the store, so a restart picks up where it was.
 */
export class ChampionPhase {
  constructor(private readonly o: ChampionPhaseOptions) {}

  /** Chooses the candidates and queues their final trainings. */
  async begin(run: RunRecord): Promise<void> {
    const { candidates, choice, considered, referenceUnfinished } = this.chooseCandidates(run);
    const ensemble = run.config.champion.ensemble;
    if (candidates.length === 0) {
      this.o.store.setRunState(run.id, 'failed', { now: this.o.now(), failure: 'no evaluation succeeded (or every successful one failed verification or came from a quarantined worker), so there is no champion' });
      this.o.log.error({ runId: run.id }, 'run ended without a single successful evaluation');
      return;
    }
    this.o.store.transaction(() => {
      this.o.store.setRunState(run.id, 'training-champion');
      this.o.store.logEvent(run.id, 'champion-candidates', { candidates, choice, considered, round: 0, ...(ensemble ? { ensemble } : {}) });
      if (referenceUnfinished) {
        const planned = this.o.store.events(run.id, 'reference-network').at(-1)?.detail;
        this.o.store.logEvent(run.id, 'reference-skipped', { description: planned?.description ?? 'the reference network', reason: 'its search training had not finished when the search budget ran out, so it got no final training' });
      }
    });
    this.o.log.info({ runId: run.id, candidates: candidates.length, best: candidates[0]!.valAccuracy }, 'search done; training the best genomes on train + validation');
    await this.ensureJobs(this.o.store.getRun(run.id)!);
  }

  /**
   * The genomes that get the final training, chosen on validation evidence only: the champion (a
   * picked genome; else the best distinct genome by validation evidence, then fewer parameters,
   * among the results that meet the run's rule if it has one; none meeting it: the best overall,
   * and the choice says so), the ensemble's members if the run asks for one (chosen from the same
   * results), and the run's reference network (merged with the champion when it is the champion).
   * `considered`: the best `topK` genomes as the choice saw them, for the report. Only eligible
   * results compete (see `eligible`: not from a quarantined worker, not rejected by verification).
   */
  chooseCandidates(run: RunRecord): { candidates: ChampionCandidate[]; choice: ChampionChoice; considered: ConsideredGenome[]; referenceUnfinished: boolean } {
    const { topK, rule, ensemble } = run.config.champion;
    let choice = championChoice(this.o.store, run);
    const { pool, ruleUnmet } = candidatePool(this.o.store, run, Math.max(topK, ensemble ? ensemblePoolSize(ensemble.size) : 0), this.o.eligible);
    if (rule && ruleUnmet && choice.by === 'rule') choice = { by: 'best', note: `no result met the rule (${describeRule(rule)}), so the best overall` };
    const out: ChampionCandidate[] = [];
    const add = (e: { id: string; genomeHash: string; seq: number; valAccuracy: number | null }, extra: Partial<ChampionCandidate>) => {
      const known = out.find((c) => c.genomeHash === e.genomeHash);
      if (known) Object.assign(known, extra, { champion: Boolean(known.champion || extra.champion) });
      else out.push({ sourceEvaluationId: e.id, genomeHash: e.genomeHash, seq: e.seq, valAccuracy: e.valAccuracy!, champion: false, ...extra });
    };
    if (choice.by === 'pick') {
      const picked = this.o.store.getEvaluation(choice.evaluationId)!;
      add({ ...picked, valAccuracy: choice.valAccuracy }, { champion: true });
    } else if (pool[0]) {
      add(pool[0], { champion: true });
    }
    if (ensemble) {
      const members = ensembleFromPool(pool, ensemble);
      if (members.length >= 2) members.forEach((m, i) => add(m.entry, { ensemblePosition: i, ensembleSimilarity: m.similarity }));
    }
    // A reference whose search training never finished (still queued or given up when the budget
    // ran out) gets no final training: nothing says how long, and a candidate needs its score.
    const reference = out.length ? referenceSource(this.o.store, run, pool, this.o.eligible) : null;
    if (reference && reference.valAccuracy !== null) add(reference, { reference: true });
    const referenceUnfinished = reference !== null && reference.valAccuracy === null;
    const considered = pool.slice(0, topK).map((e) => ({ genomeHash: e.genomeHash, evaluationId: e.id, valAccuracy: e.valAccuracy!, results: e.results ?? 1, budgetEpochs: e.job.budget.epochs, params: e.params }));
    return { candidates: out, choice, considered, referenceUnfinished };
  }

  private roundChoice(runId: string): ChampionChoice | undefined {
    return this.o.store.events(runId, 'champion-candidates').at(-1)?.detail.choice;
  }

  candidates(runId: string): ChampionCandidate[] {
    const ev = this.o.store.events(runId, 'champion-candidates').at(-1);
    return ev ? ev.detail.candidates : [];
  }

  /** Queues each candidate's final training once (idempotent across restarts). */
  async ensureJobs(run: RunRecord): Promise<void> {
    const existing = new Set(this.o.store.evaluations(run.id, 'champion').map((e) => e.seq));
    const candidates = this.candidates(run.id);
    // A user's pick is exported as picked: no check may replace it.
    const pair = this.roundChoice(run.id)?.by === 'pick' ? null : heldBackPair(candidates);
    const heldBack = pair ? heldBackCount(run.dataset.manifest.valCount, run.config.champion.selectionShare) : 0;
    for (const c of candidates) {
      if (existing.has(c.seq)) continue;
      const source = this.o.store.getEvaluation(c.sourceEvaluationId)!;
      const { maxSamples } = run.config.champion;
      const holdout = pair && heldBackSide(pair, c.seq) ? heldBack : 0;
      const trainAndVal = run.dataset.manifest.trainCount + run.dataset.manifest.valCount - holdout;
      const budgetMaxEpochs = maxSamples === undefined ? undefined : Math.max(1, Math.min(1000, Math.floor(maxSamples / trainAndVal)));
      // A learning curve that does not count (a quarantined worker's: only the reference network
      // can have one here) says nothing about the length.
      const history = this.o.eligible && !this.o.eligible(source) ? [] : (source.result?.history ?? []);
      // A regression run's fitness is no accuracy: its curve is read without the noise rule.
      const valCount = run.dataset.manifest.target ? undefined : run.dataset.manifest.valCount;
      const length = finalTrainingLength(run.config.champion.epochs, history, source.job.budget.epochs, budgetMaxEpochs, valCount, run.dataset.manifest.target ? 'regression' : 'classification');
      const { inherit: _searchStart, resume: _searchResume, ...searchJob } = source.job;
      const warmStart = searchWeights(this.o.store, run.config, run.id, source.seq);
      const job: EvaluationJob = {
        ...searchJob,
        kind: 'champion',
        attempt: 1,
        evaluationId: championId(run.id, c.seq, 1),
        // The weights its search training ended with (warm start), else the same initial weights
        // that earned the genome its place; the data (train + validation) and the budget change.
        // The reference network follows the same rules.
        seed: source.job.seed,
        ...(warmStart ? { inherit: warmStart } : {}),
        budget: { epochs: length.epochs, maxSeconds: run.config.champion.maxSeconds, ...(maxSamples === undefined ? {} : { maxSamples }) },
        // The champion and the reference leave the same validation samples out, for the held-back check.
        ...(holdout ? { selectionHoldout: holdout } : {}),
      };
      this.o.store.transaction(() => {
        this.o.store.addEvaluation(job, c.seq, this.o.now(), false);
        this.o.store.logEvent(run.id, 'champion-training-length', {
          evaluationId: job.evaluationId,
          genomeHash: c.genomeHash,
          sourceEvaluationId: c.sourceEvaluationId,
          ...length,
          startsFrom: warmStart ? { kind: 'search-weights', epochs: warmStart.checkpoint.epoch } : { kind: 'fresh' },
        });
      });
      await this.o.queue.add(job);
    }
    await this.finishIfComplete(run.id);
  }

  /**
   * Scores one final training on the test split, once, after every choice was made: the champion's
   * is stored as the champion (the choice on validation stands whatever it scores), the reference
   * network's is recorded for the comparison, an ensemble member's is kept for the ensemble.
   */
  async recordResult(ev: EvaluationRecord, result: EvaluationResult): Promise<void> {
    const candidate = this.candidates(ev.runId).find((c) => c.seq === ev.seq);
    if (!candidate) throw new InternalError(`champion evaluation ${ev.id} is not for a candidate of run ${ev.runId}`);
    const run = this.o.store.getRun(ev.runId)!;
    const test = this.o.testSplit();
    const score = await scoreChampion(result.model!, test, run.dataset.manifest.target);
    const isChampion = candidate.champion !== false;
    // Timed on the test inputs already read (their labels play no part in a latency).
    const onnxLatency = isChampion ? await this.onnxLatencyOf(run, ev.genomeHash, result.model!, test) : undefined;
    let exportIt = false;
    const recorded = this.o.store.transaction(() => {
      if (this.o.store.recordResult(ev.id, result, this.o.now()) !== 'recorded') return false;
      // Decided here, in the transaction, against the champion stored so far: two final trainings
      // scored at the same time must not both see "no champion yet".
      exportIt = this.exportsThis(ev, candidate, result);
      const scored = {
        evaluationId: ev.id,
        sourceEvaluationId: candidate.sourceEvaluationId,
        genomeHash: ev.genomeHash,
        valAccuracy: candidate.valAccuracy,
        testAccuracy: score.accuracy,
        testLoss: score.loss,
        ...(score.regression ? { testRegression: score.regression } : {}),
      };
      this.o.store.logEvent(ev.runId, 'champion-candidate-scored', {
        ...scored,
        backend: score.backend,
        latencyMsPerSample: score.latencyMsPerSample,
        ...(onnxLatency ? { onnxLatency } : {}),
        champion: candidate.champion !== false,
        round: championRound(this.o.store, ev.runId),
        ...(candidate.ensemblePosition === undefined ? {} : { ensemblePosition: candidate.ensemblePosition }),
      });
      if (candidate.ensemblePosition !== undefined) {
        this.o.store.saveEnsembleMember(
          { runId: ev.runId, position: candidate.ensemblePosition, evaluationId: ev.id, sourceEvaluationId: candidate.sourceEvaluationId, genomeHash: ev.genomeHash, testAccuracy: score.accuracy },
          JSON.stringify(result.model),
        );
      }
      if (candidate.reference) {
        this.o.store.logEvent(ev.runId, 'reference-scored', { ...scored, champion: isChampion, round: championRound(this.o.store, ev.runId) });
      }
      if (exportIt) {
        this.o.store.saveChampion(
          { runId: ev.runId, ...scored, testPredictions: Array.from(score.predictions), result: { ...result, model: undefined }, createdAt: this.o.now() },
          JSON.stringify(result.model),
        );
      }
      return true;
    });
    if (!recorded) return;
    this.o.log.info({ evaluationId: ev.id, testAccuracy: score.accuracy, champion: isChampion, exported: exportIt, reference: candidate.reference === true }, 'champion candidate scored on the held-out test split');
    await this.finishIfComplete(ev.runId);
  }

  /**
   * Whether this final training becomes the run's champion (the model exported). Without the
   * held-back check: the search's champion. With it (the job held validation samples back), the
   * better of the champion and the reference network on those samples, decided as their results
   * arrive: the first of the two is stored as the champion, the second replaces it only if it
   * wins (a tie keeps the search's champion; see `heldBackWinner`). The test split plays no part.
   */
  private exportsThis(ev: EvaluationRecord, candidate: ChampionCandidate, result: EvaluationResult): boolean {
    const pair = heldBackPair(this.candidates(ev.runId));
    const side = pair && heldBackSide(pair, ev.seq);
    if (ev.job.selectionHoldout === undefined || !pair || !side) return candidate.champion !== false;
    const other = side === 'champion' ? pair.reference : pair.champion;
    const current = this.o.store.getChampion(ev.runId);
    if (!current || current.genomeHash !== other.genomeHash) return true;
    const mine = result.valAccuracy;
    const theirs = current.result.valAccuracy;
    return side === 'champion' ? heldBackWinner(mine, theirs) === 'search' : heldBackWinner(theirs, mine) === 'reference';
  }

  /** Records the held-back check once both of its final trainings are done (a `champion-held-back-check` event). */
  private logHeldBackCheck(runId: string): void {
    const pair = heldBackPair(this.candidates(runId));
    const round = championRound(this.o.store, runId);
    if (!pair || this.o.store.events(runId, 'champion-held-back-check').some((e) => e.detail.round === round)) return;
    const done = this.o.store.evaluations(runId, 'champion').filter((e) => e.state === 'done' && e.job.selectionHoldout !== undefined);
    const champion = done.find((e) => e.seq === pair.champion.seq);
    const reference = done.find((e) => e.seq === pair.reference.seq);
    const exported = this.o.store.getChampion(runId);
    if (!champion || !reference || !exported) return;
    const side = (e: EvaluationRecord) => ({ evaluationId: e.id, genomeHash: e.genomeHash, valAccuracy: e.result?.valAccuracy ?? null });
    this.o.store.logEvent(runId, 'champion-held-back-check', {
      heldBack: champion.job.selectionHoldout!,
      champion: side(champion),
      reference: side(reference),
      exported: exported.genomeHash === reference.genomeHash ? 'reference' : 'search',
      round,
    });
  }

  /**
   * Scores the ensemble of the current round on the test split once (an `ensemble-scored` event),
   * when the round has one (the run file's, or one asked of a finished run) and at least two of its
   * members trained.
   */
  private async scoreEnsembleOnce(run: RunRecord): Promise<void> {
    const round = championRound(this.o.store, run.id);
    const settings = this.o.store.events(run.id, 'champion-candidates').at(-1)?.detail.ensemble;
    if (!settings || this.o.store.events(run.id, 'ensemble-scored').some((e) => (e.detail.round ?? 0) === round)) return;
    const members = this.o.store.ensembleMembers(run.id);
    if (members.length < 2) {
      this.o.store.logEvent(run.id, 'ensemble-skipped', { reason: `only ${members.length} member(s) finished their final training; an ensemble needs two` });
      return;
    }
    const target = run.dataset.manifest.target;
    const score = await scoreEnsemble(members.map((m) => JSON.parse(m.artifactsJson)), this.o.testSplit(), run.dataset.manifest.numClasses, target);
    this.o.store.logEvent(run.id, 'ensemble-scored', {
      testAccuracy: score.accuracy,
      ...(score.regression ? { testRegression: score.regression } : {}),
      backend: score.backend,
      averaging: target ? 'mean of the members\' predicted numbers' : 'mean of the members\' softmax probabilities',
      round,
      size: settings.size,
      diversityPenalty: settings.diversityPenalty,
      members: members.map((m) => ({
        position: m.position,
        genomeHash: m.genomeHash,
        evaluationId: m.evaluationId,
        testAccuracy: m.testAccuracy,
        similarity: this.candidates(run.id).find((c) => c.genomeHash === m.genomeHash)?.ensembleSimilarity ?? null,
      })),
    });
    this.o.log.info({ runId: run.id, members: members.length, testAccuracy: score.accuracy }, 'ensemble scored on the held-out test split');
  }

  /** The CPU latency of a final training's model exported to ONNX, in ONNX Runtime on this machine (or why there is none). */
  private async onnxLatencyOf(run: RunRecord, genomeHash: string, model: ModelArtifactsMessage, samples: LabelledSamples): Promise<OnnxLatency | OnnxLatencyUnavailable> {
    try {
      const bytes = onnxExportOf(run, [{ genome: this.o.store.getGenome(genomeHash)!.genome, artifacts: model }]);
      return await measureOnnxLatency(bytes, samples, run.dataset.manifest.inputShape);
    } catch (err) {
      this.o.log.warn({ runId: run.id, genomeHash, err: (err as Error).message }, 'the model could not be exported to ONNX');
      return { unavailable: `the ONNX export failed: ${(err as Error).message}` };
    }
  }

  /** After a candidate's attempt was given up: the phase may be complete without it. */
  async attemptGivenUp(runId: string): Promise<void> {
    await this.finishIfComplete(runId);
  }

  /** Ends the run once every candidate has a final outcome: exported champion, or failure. */
  private async finishIfComplete(runId: string): Promise<void> {
    const run = this.o.store.getRun(runId)!;
    if (run.state !== 'training-champion') return;
    const champions = this.o.store.evaluations(runId, 'champion');
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
    this.logHeldBackCheck(runId);
    await this.scoreEnsembleOnce(run);
    this.o.store.setRunState(runId, 'finished', { now: this.o.now() });
    const finished = this.o.store.getRun(runId)!;
    const dir = await exportChampion(this.o.store, finished, `${this.o.dataDir}/runs/${runId}/champion`);
    this.o.store.logEvent(runId, 'champion-exported', { dir, testAccuracy: champion.testAccuracy });
    this.o.log.info({ runId, testAccuracy: champion.testAccuracy, dir }, 'champion exported');
    this.o.onFinished?.(finished);
  }
}
