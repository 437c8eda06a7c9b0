import { randomBytes } from 'node:crypto';
import { readFile } from 'node:fs/promises';
import {
  EVALUATION_JOB_VERSION,
  analyzeGenome,
  canonicalGenome,
  checkGenome,
  createRandom,
  genomeHash,
  decodeShard,
  defaultSearchSpace,
  describeGenome,
  evaluationResultValidator,
  type DataShape,
  type EvaluationJob,
  type EvaluationResult,
  type GenomeAnalysis,
  type LabelledSamples,
  type RunConfig,
  type SearchSpace,
  type WorkerHeartbeat,
} from '@netbreeder/shared-types';
import type { Logger } from '../logger.js';
import type { EvaluationQueue, FinishedJob } from '../queue/evaluation-queue.js';
import type { EvaluationRecord, RunRecord, RunStore } from '../store/run-store.js';
import { createSearchAlgorithm, type Proposal, type SearchAlgorithm } from '../search/index.js';
import { storeDataset } from './store-dataset.js';
import { loadDataset } from '../importers/index.js';
import { ChampionPhase } from './champion-phase.js';

/** How the run manager paces itself. */
export interface RunManagerOptions {
  store: RunStore;
  queue: EvaluationQueue;
  log: Logger;
  /** Folder for datasets and champion exports. */
  dataDir: string;
  /** Milliseconds between reconcile passes. @default 1000 */
  tickMs?: number;
  /** A worker counts as alive while its last heartbeat is younger than this. @default 20000 */
  workerTimeoutMs?: number;
  /** Evaluations kept queued beyond one per alive worker, so no worker waits. @default 1 */
  queueSlack?: number;
  /** Clock, for tests. @default Date.now */
  now?: () => number;
}

/** Events a watcher (the demo, the CLI) can follow. */
export interface RunManagerEvents {
  resultRecorded?: (evaluation: EvaluationRecord, result: EvaluationResult) => void;
  runFinished?: (run: RunRecord) => void;
}

/**
 * What an admin can do to a run: pause (queue nothing new), resume, stop (end without a champion),
 * or finish (end the search now: what is in flight completes, then the champion is trained).
 */
export type RunControl = 'pause' | 'resume' | 'stop' | 'finish';

/** A request that the run's state does not allow (pausing a finished run, say). */
export class RunStateError extends Error {
  override name = 'RunStateError';
}

/** A submitted genome that breaks the run's search space; `issues` says each problem. */
export class GenomeRejectedError extends Error {
  override name = 'GenomeRejectedError';
  constructor(readonly issues: string[]) {
    super(`genome rejected: ${issues.join('; ')}`);
  }
}

/** Derives each search evaluation's training seed from the run's seed and the proposal's position. */
export const evaluationSeed = (runSeed: number, seq: number): number => createRandom(`${runSeed}:search:${seq}`).uint32();

/** The failure recorded for an evaluation that a finish with `discardInFlight` gave up. */
export const DISCARDED_AT_FINISH = 'run finished before this result arrived';

const evaluationId = (runId: string, seq: number, attempt: number, kind: 'search' | 'champion' = 'search') =>
  `${runId}-${kind === 'search' ? 's' : 'c'}${seq}-a${attempt}`;

/**
 * Drives one run: keeps the queue topped up with proposals from the search algorithm, records each
 * result once (by evaluation id) and feeds it back, reissues failed attempts up to the run's limit,
 * and when the budget is spent trains the champion and scores it on the held-out test split.
 *
 * Asynchronous by design: a new proposal is made whenever a result arrives or a worker frees up,
 * never after a generation barrier. Everything it decides is written to the store first, so a
 * restarted coordinator resumes the same run from the store ({@link RunManager.resume}).
 */
export class RunManager {
  private run: RunRecord | null = null;
  private algorithm: SearchAlgorithm | null = null;
  private space: SearchSpace = defaultSearchSpace();
  private data: DataShape | null = null;
  private testSplit: LabelledSamples | null = null;
  private timer: NodeJS.Timeout | null = null;
  private revoked: Set<string> | null = null;
  private ticking: Promise<void> | null = null;
  private tickAgain = false;
  private readonly now: () => number;
  private readonly tickMs: number;
  private readonly workerTimeoutMs: number;
  private readonly queueSlack: number;
  private readonly champion: ChampionPhase;

  constructor(
    private readonly opts: RunManagerOptions,
    private readonly events: RunManagerEvents = {},
  ) {
    this.now = opts.now ?? Date.now;
    this.tickMs = opts.tickMs ?? 1000;
    this.workerTimeoutMs = opts.workerTimeoutMs ?? 20_000;
    this.queueSlack = opts.queueSlack ?? 1;
    this.champion = new ChampionPhase({
      store: opts.store,
      queue: opts.queue,
      log: opts.log,
      dataDir: opts.dataDir,
      now: this.now,
      testSplit: () => this.testSplit!,
      onFinished: (run) => this.events.runFinished?.(run),
    });
  }

  get store(): RunStore {
    return this.opts.store;
  }

  /** The run being driven, freshly read from the store. */
  currentRun(): RunRecord | null {
    return this.run ? this.store.getRun(this.run.id) : null;
  }

  /** Prepares the dataset, records a new run and starts searching. */
  async startRun(config: RunConfig): Promise<RunRecord> {
    // Reads, splits and encodes the data (nothing is written if that fails), then stores it.
    const { dataset: prepared, preparation } = await loadDataset(config, { log: this.opts.log });
    const dataset = await storeDataset(prepared, this.opts.dataDir, preparation);
    const id = `r${this.now().toString(36)}${randomBytes(3).toString('hex')}`;
    this.store.transaction(() => {
      this.store.createRun({ id, name: config.name, config, seed: config.seed, dataset, now: this.now() });
      this.store.logEvent(id, 'run-created', { name: config.name, dataset: dataset.manifest.sha256 });
      for (const warning of preparation.warnings) this.store.logEvent(id, 'dataset-warning', warning);
    });
    this.opts.log.info(
      { runId: id, train: prepared.train.count, val: prepared.val.count, test: prepared.test.count, classes: prepared.classNames },
      'run created',
    );
    await this.attach(this.store.getRun(id)!);
    return this.store.getRun(id)!;
  }

  /** Resumes the newest unfinished run in the store, if there is one. */
  async resume(): Promise<RunRecord | null> {
    const run = this.store.unfinishedRun();
    if (!run) return null;
    await this.attach(run);
    this.store.logEvent(run.id, 'run-resumed', { proposals: run.proposals });
    this.opts.log.info({ runId: run.id, state: run.state, proposals: run.proposals }, 'resuming run from the store');
    return run;
  }

  private async attach(run: RunRecord): Promise<void> {
    const space = run.config.searchSpace ?? defaultSearchSpace();
    const m = run.dataset.manifest;
    const data = { inputShape: m.inputShape, numClasses: m.numClasses };
    const testSplit = decodeShard(await readFile(run.dataset.testPath)).train;
    const algorithm = createSearchAlgorithm(
      run.config.search.algorithm,
      (({ algorithm: _algorithm, ...settings }) => settings)(run.config.search),
      { space, data, seed: run.seed },
      (run.searchSnapshot as Parameters<typeof createSearchAlgorithm>[3]) ?? undefined,
    );
    // Only now, with everything ready, does the reconcile loop see the run.
    this.space = space;
    this.data = data;
    this.testSplit = testSplit;
    this.algorithm = algorithm;
    this.run = run;
    await this.rebuildQueue('coordinator started');
  }

  /**
   * The store is the truth: every evaluation it still owes a result is (re-)added to the queue.
   * Adding a job id that Redis still has changes nothing, so nothing is queued twice.
   */
  private async rebuildQueue(reason: string): Promise<void> {
    const run = this.run!;
    const pending = this.store.pendingEvaluations(run.id);
    let added = 0;
    for (const ev of pending) {
      if (!(await this.opts.queue.has(ev.id))) added++;
      await this.opts.queue.add(ev.job);
    }
    if (added > 0) {
      this.store.logEvent(run.id, 'queue-rebuilt', { reason, pending: pending.length, added });
      this.opts.log.warn({ reason, pending: pending.length, added }, 'queue rebuilt from the store');
    }
  }

  /** Starts the reconcile loop (and listens for finished jobs to react at once). */
  async startLoop(): Promise<void> {
    await this.opts.queue.watch(() => void this.tick());
    this.timer = setInterval(() => void this.tick(), this.tickMs);
    await this.tick();
  }

  async stopLoop(): Promise<void> {
    if (this.timer) clearInterval(this.timer);
    this.timer = null;
    await this.ticking;
  }

  /** One pass: record finished jobs, move the run's phase on, top up the queue. Never runs twice at once. */
  tick(): Promise<void> {
    if (this.ticking) {
      this.tickAgain = true;
      return this.ticking;
    }
    this.ticking = (async () => {
      do {
        this.tickAgain = false;
        try {
          await this.pass();
        } catch (err) {
          this.opts.log.error({ err: (err as Error).message, stack: (err as Error).stack }, 'reconcile pass failed; will retry');
        }
      } while (this.tickAgain);
    })().finally(() => {
      this.ticking = null;
    });
    return this.ticking;
  }

  private async pass(): Promise<void> {
    if (!this.run) return;
    if ((await this.opts.queue.checkMarker(this.run.id)) === 'lost') await this.rebuildQueue('Redis holds none of this coordinator\'s keys (flushed or restarted empty)');
    for (const job of await this.opts.queue.finished()) await this.reconcile(job);
    const run = this.currentRun();
    if (!run) return;
    if (run.state === 'searching') await this.advanceSearch(run);
    else if (run.state === 'training-champion') await this.champion.ensureJobs(run);
  }

  /** Records heartbeats and marks the worker's current evaluation running. */
  recordHeartbeat(hb: WorkerHeartbeat): void {
    if (this.isRevoked(hb.workerId)) throw new Error(`worker ${hb.workerId} is revoked`);
    const now = this.now();
    this.store.transaction(() => {
      this.store.upsertWorker(hb, now);
      if (hb.currentEvaluationId) this.store.markRunning(hb.currentEvaluationId, hb.workerId, now);
    });
  }

  /** Workers whose last heartbeat is recent enough. */
  aliveWorkers(): number {
    const cutoff = this.now() - this.workerTimeoutMs;
    return this.store.countLiveWorkers(cutoff);
  }

  isWorkerAlive(lastSeenAt: number): boolean {
    return lastSeenAt >= this.now() - this.workerTimeoutMs;
  }

  /** True when results and heartbeats of this worker are refused. */
  isRevoked(workerId: string): boolean {
    if (!this.revoked) this.revoked = new Set(this.store.events(null, 'worker-revoked').map((e) => (e.detail as { workerId: string }).workerId));
    return this.revoked.has(workerId);
  }

  /** Refuses every later result and heartbeat of `workerId` (a PC that misbehaves or left the office). */
  revokeWorker(workerId: string, reason: string): void {
    if (this.isRevoked(workerId)) return;
    this.store.logEvent(null, 'worker-revoked', { workerId, reason });
    this.revoked!.add(workerId);
    this.opts.log.warn({ workerId, reason }, 'worker revoked; its results will be refused');
  }

  /**
   * Pauses, resumes or stops the current run. A paused run queues nothing new (jobs already queued
   * still train and are recorded); a stopped run ends without a champion.
   *
   * `discardInFlight` (finish only): the search evaluations still queued or training are given up
   * at once and their results ignored, so the champion is chosen from what is recorded at the
   * moment of the call (a hard budget, as `npm run bench:search` needs).
   */
  async control(runId: string, action: RunControl, opts: { discardInFlight?: boolean } = {}): Promise<RunRecord> {
    const run = this.store.getRun(runId);
    if (!run) throw new Error(`no run ${runId}`);
    const allowed: Record<RunControl, RunRecord['state'][]> = {
      pause: ['searching'],
      resume: ['paused'],
      stop: ['searching', 'paused', 'training-champion'],
      finish: ['searching', 'paused'],
    };
    if (!allowed[action].includes(run.state)) throw new RunStateError(`cannot ${action} run ${runId} while it is ${run.state}`);
    const next = action === 'pause' ? 'paused' : action === 'stop' ? 'stopped' : 'searching';
    this.store.transaction(() => {
      this.store.setRunState(runId, next, { now: this.now() });
      this.store.logEvent(runId, action === 'finish' ? 'run-finish-requested' : `run-${next}`, { from: run.state, action, ...(opts.discardInFlight ? { discardInFlight: true } : {}) });
    });
    this.opts.log.info({ runId, from: run.state, to: next }, `run ${action}`);
    if (action === 'stop') await this.cancelPending(runId, 'run stopped');
    if (action === 'finish' && opts.discardInFlight) await this.cancelPending(runId, DISCARDED_AT_FINISH);
    if (action !== 'pause') await this.tick();
    return this.store.getRun(runId)!;
  }

  /**
   * Gives up a run's owed evaluations and takes them out of the queue; a result that still arrives
   * is ignored. All are marked failed before the first await, so no result slips in between.
   */
  private async cancelPending(runId: string, reason: string): Promise<void> {
    const pending = this.store.pendingEvaluations(runId);
    this.store.transaction(() => {
      for (const ev of pending) this.store.recordFailure(ev.id, reason, this.now());
    });
    for (const ev of pending) await this.opts.queue.remove(ev.id).catch(() => undefined); // a job being trained cannot be removed; its result is ignored
  }

  /**
   * Queues a genome the user brings (a baseline of their own) as one more search evaluation of the
   * current run. The genome must pass the run's search space; nothing is stored when it does not.
   */
  async submitGenome(runId: string, value: unknown): Promise<EvaluationRecord> {
    const run = this.store.getRun(runId);
    if (!run || run.id !== this.run?.id) throw new Error(`run ${runId} is not the run this coordinator drives`);
    if (run.state !== 'searching' && run.state !== 'paused') throw new RunStateError(`run ${runId} is ${run.state}; genomes can be added while it searches`);
    const check = checkGenome(value, this.space, this.data!);
    if (!check.ok) throw new GenomeRejectedError(check.issues.map((i) => (i.nodeId ? `node '${i.nodeId}': ${i.message}` : i.message)));
    const genome = canonicalGenome(check.genome);
    await this.queueProposal(run.id, { genome, genomeHash: genomeHash(genome), parentHashes: [], mutation: null, reason: 'submitted by the user' }, check.analysis);
    return this.store.evaluations(run.id).at(-1)!;
  }

  // ---- search phase --------------------------------------------------------------------------

  private searchBudgetSpent(run: RunRecord): boolean {
    if (this.store.events(run.id, 'run-finish-requested').length > 0) return true;
    const elapsedMin = (this.now() - (run.searchStartedAt ?? run.createdAt)) / 60_000;
    return run.proposals >= run.config.budget.maxEvaluations || elapsedMin >= run.config.budget.maxMinutes;
  }

  private async advanceSearch(run: RunRecord): Promise<void> {
    const counts = this.store.counts(run.id, 'search');
    const inFlight = counts.queued + counts.running;
    if (this.searchBudgetSpent(run)) {
      if (inFlight === 0) await this.champion.begin(run);
      return;
    }
    const target = Math.max(2, this.aliveWorkers() + this.queueSlack);
    let proposals = run.proposals;
    for (let n = inFlight; n < target && proposals < run.config.budget.maxEvaluations; n++, proposals++) {
      await this.proposeOne(run.id);
    }
  }

  private async proposeOne(runId: string): Promise<void> {
    const proposal = this.algorithm!.propose();
    const analysis = analyzeGenome(proposal.genome, this.data!);
    if (!analysis.ok) throw new Error(`search proposed an invalid genome: ${analysis.issues.map((i) => i.message).join('; ')}`);
    await this.queueProposal(runId, proposal, analysis.analysis);
  }

  /** Records a proposal (genome, evaluation, lineage, algorithm snapshot) in one transaction, then queues it. */
  private async queueProposal(runId: string, proposal: Proposal, analysis: GenomeAnalysis): Promise<void> {
    const algorithm = this.algorithm!;
    const run = this.store.getRun(runId)!;
    const seq = run.proposals;
    const job: EvaluationJob = {
      schemaVersion: EVALUATION_JOB_VERSION,
      kind: 'search',
      evaluationId: evaluationId(runId, seq, 1),
      runId,
      attempt: 1,
      genome: proposal.genome,
      genomeHash: proposal.genomeHash,
      seed: evaluationSeed(run.seed, seq),
      budget: { epochs: proposal.budgetEpochs ?? proposal.genome.training.epochs, maxSeconds: run.config.evaluation.maxSeconds },
      dataset: run.dataset.manifest,
    };
    this.store.transaction(() => {
      this.store.putGenome({
        hash: proposal.genomeHash,
        genome: proposal.genome,
        params: analysis.params,
        flops: analysis.flops,
        summary: describeGenome(proposal.genome, this.data!.numClasses),
      });
      this.store.addEvaluation(job, seq, this.now(), true);
      for (const parent of proposal.parentHashes) {
        this.store.addLineage(runId, {
          evaluationId: job.evaluationId,
          childHash: proposal.genomeHash,
          parentHash: parent,
          operator: proposal.mutation?.operator ?? 'none',
          detail: proposal.mutation?.detail ?? proposal.reason,
        });
      }
      this.store.saveSearchSnapshot(runId, algorithm.snapshot());
    });
    await this.opts.queue.add(job);
  }

  // ---- results -------------------------------------------------------------------------------

  /** Validates one finished job's outcome and records it once; the job leaves Redis afterwards. */
  private async reconcile(job: FinishedJob): Promise<void> {
    const ev = this.store.getEvaluation(job.id);
    if (!ev) {
      this.store.logEvent(null, 'rejected-result', { evaluationId: job.id, reason: 'unknown evaluation id' });
      this.opts.log.warn({ evaluationId: job.id }, 'finished job names no evaluation of this store; removed');
    } else if (ev.state === 'done' || ev.state === 'failed') {
      this.opts.log.debug({ evaluationId: job.id }, 'result already recorded; duplicate ignored');
    } else if (job.state === 'completed') {
      const problem = this.resultProblem(ev, job.returnvalue);
      if (problem) {
        await this.rejectResult(ev, problem);
        return;
      } else if (ev.kind === 'search') {
        this.recordSearchResult(ev, job.returnvalue as EvaluationResult);
      } else {
        await this.champion.recordResult(ev, job.returnvalue as EvaluationResult);
      }
    } else {
      await this.recordFailedAttempt(ev, job.failedReason ?? 'failed', job.unrecoverable);
    }
    await this.opts.queue.remove(job.id);
  }

  /**
   * A result that cannot be recorded changes nothing but the event log: the same job goes back in
   * the queue for another worker. Past `maxAttempts` rejections the attempt counts as failed.
   */
  private async rejectResult(ev: EvaluationRecord, problem: string): Promise<void> {
    this.store.logEvent(ev.runId, 'rejected-result', { evaluationId: ev.id, reason: problem });
    this.opts.log.warn({ evaluationId: ev.id, reason: problem }, 'result rejected; the job goes back in the queue');
    await this.opts.queue.remove(ev.id);
    const run = this.store.getRun(ev.runId)!;
    if (this.store.countEventsNaming(ev.runId, 'rejected-result', ev.id) >= run.config.evaluation.maxAttempts) {
      await this.recordFailedAttempt(ev, `every result for it was rejected; the last because ${problem}`, false);
    } else {
      await this.opts.queue.add(ev.job);
    }
  }

  /** Why a returned value cannot be recorded for `ev`, or null when it can. */
  private resultProblem(ev: EvaluationRecord, value: unknown): string | null {
    const issues = evaluationResultValidator.issues(value);
    if (issues.length) return issues.slice(0, 5).map((i) => `${i.path || '(root)'} ${i.message}`).join('; ');
    const result = value as EvaluationResult;
    if (result.evaluationId !== ev.id) return `result names evaluation ${result.evaluationId}, not ${ev.id}`;
    if (this.isRevoked(result.workerId)) return `worker ${result.workerId} is revoked`;
    if (ev.kind === 'search' && (result.valAccuracy === null || result.valLoss === null)) return 'a search result needs validation accuracy and loss';
    if (ev.kind === 'champion' && !result.model) return 'a champion result needs the trained model';
    return null;
  }

  private recordSearchResult(ev: EvaluationRecord, result: EvaluationResult): void {
    const recorded = this.store.transaction(() => {
      const outcome = this.store.recordResult(ev.id, result, this.now());
      if (outcome !== 'recorded') return false;
      this.algorithm!.observe({
        evaluationId: ev.id,
        genomeHash: ev.genomeHash,
        genome: ev.job.genome,
        fitness: result.valAccuracy!,
        budgetEpochs: ev.job.budget.epochs,
        params: result.paramCount,
        flops: result.flops,
        trainSeconds: result.trainSeconds,
      });
      this.store.saveSearchSnapshot(ev.runId, this.algorithm!.snapshot());
      return true;
    });
    if (!recorded) return;
    this.opts.log.info(
      { evaluationId: ev.id, valAccuracy: result.valAccuracy, params: result.paramCount, seconds: result.trainSeconds, worker: result.workerId },
      'evaluation recorded',
    );
    this.events.resultRecorded?.(this.store.getEvaluation(ev.id)!, result);
  }

  /** Records a failed attempt and, unless it cannot succeed, queues the next attempt. */
  private async recordFailedAttempt(ev: EvaluationRecord, reason: string, unrecoverable: boolean): Promise<void> {
    const run = this.store.getRun(ev.runId)!;
    const canRetry = !unrecoverable && ev.attempt < run.config.evaluation.maxAttempts;
    const next: EvaluationJob | null = canRetry
      ? { ...ev.job, attempt: ev.attempt + 1, evaluationId: evaluationId(ev.runId, ev.seq, ev.attempt + 1, ev.kind) }
      : null;
    this.store.transaction(() => {
      if (this.store.recordFailure(ev.id, reason, this.now()) !== 'recorded') return;
      if (next) {
        this.store.addEvaluation(next, ev.seq, this.now(), false);
        this.store.logEvent(ev.runId, 'reissued', { evaluationId: ev.id, next: next.evaluationId, reason });
      } else {
        this.store.logEvent(ev.runId, 'genome-failing', { evaluationId: ev.id, genomeHash: ev.genomeHash, attempts: ev.attempt, reason });
      }
    });
    this.opts.log.warn({ evaluationId: ev.id, reason, reissuedAs: next?.evaluationId ?? null }, 'evaluation attempt failed');
    if (next) await this.opts.queue.add(next);
    else if (ev.kind === 'champion') await this.champion.attemptGivenUp(ev.runId);
  }

}
