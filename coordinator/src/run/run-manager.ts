import { randomBytes } from 'node:crypto';
import { readFile } from 'node:fs/promises';
import { join } from 'node:path';
import {
  NetbreederError,
  canonicalGenome,
  checkGenome,
  genomeHash,
  decodeShard,
  defaultSearchSpace,
  type DataShape,
  type EvaluationResult,
  type LabelledSamples,
  type RunConfig,
  type RunEventKind,
  type SearchSpace,
} from '@netbreeder/shared-types';
import type { FinishedJob } from '../queue/evaluation-queue.js';
import type { EvaluationRecord, RunRecord, RunStore } from '../store/run-store.js';
import { createSearchAlgorithm, type Proposal, type SearchAlgorithm } from '../search/index.js';
import { storeDataset } from './store-dataset.js';
import { prepareRun, type PreparedRun } from './prepare-run.js';
import { ChampionPhase } from '../champion/champion-phase.js';
import { controlTarget, type RunControl } from '../store/run-lifecycle.js';
import { CheckpointFiles } from '../checkpoints/checkpoint-files.js';
import { checkpointSettings } from '../checkpoints/checkpoint-policy.js';
import { Verifier } from '../trust/verifier.js';
import { observationFor, observeStep, rejectStep } from './search-record.js';
import { proposeMore, recordProposal } from './proposal-recorder.js';
import { recordFailedAttempt, rejectResult, resultProblem, type AttemptDeps } from './failed-attempts.js';
import { emptyBatch, type QueueBatch } from './queue-batch.js';
import { WorkerRoster } from './worker-roster.js';
import { DISCARDED_AT_FINISH, GenomeRejectedError, RunStateError, type RunManagerEvents, type RunManagerOptions } from './run-manager-options.js';
import { ReconcileLoop } from './reconcile-loop.js';
import { forgetWorkerResults } from './forget-worker.js';
import { logReference } from '../champion/reference-network.js';
import { searchContextOf } from './search-context.js';
import { newSamples } from './sample-budget.js';

export { DISCARDED_AT_FINISH, GenomeRejectedError, RunStateError, type RunControl, type RunManagerEvents, type RunManagerOptions } from './run-manager-options.js';
export { evaluationSeed } from './proposal-recorder.js';

/** The event each control logs. */
const CONTROL_EVENTS = { pause: 'run-paused', resume: 'run-searching', stop: 'run-stopped', finish: 'run-finish-requested' } as const satisfies Record<RunControl, RunEventKind>;

/**
 * Drives one run: keeps the queue topped up with proposals from the search algorithm, records each
 * result once (by evaluation id) and feeds it back, reissues failed attempts up to the run's limit,
 * and when the budget is spent trains the champion and scores it on the held-out test split.
 *
 * Asynchronous by design: a new proposal is made whenever a result arrives or a worker frees up,
 * never after a generation barrier. Everything it decides is written to the store first, so a
 * restarted coordinator resumes the same run from the store ({@link RunManager.resume}).
 *
 * About 430 lines, kept in one file on purpose: this class is the one owner of a run's mutable
 * state (the algorithm, the sample budget, the queue slack), and each method here reads or changes
 * it; the work without that state is already in this folder's other files (proposal-recorder,
 * failed-attempts, search-record, reconcile-loop, queue-batch, prepare-run, store-dataset).
 */
export class RunManager {
  private run: RunRecord | null = null;
  private algorithm: SearchAlgorithm | null = null;
  private space: SearchSpace = defaultSearchSpace();
  private data: DataShape | null = null;
  private testSplit: LabelledSamples | null = null;
  private readonly loop: ReconcileLoop;
  /** True once `finish` was asked for the current run (also read back from the store on attach). */
  private finishRequested = false;
  /** Samples the driven run's recorded search results spent (see `budget.maxSamples`). */
  private samplesSpent = 0;
  private readonly now: () => number;
  private readonly queueSlack: number;
  private readonly queueSlackPerWorker: number;
  private readonly champion: ChampionPhase;
  /** Training checkpoints workers upload (files under `<dataDir>/checkpoints`, latest per evaluation sequence in the store). */
  readonly checkpoints: CheckpointFiles;
  /** Replicated verification, worker trust and quarantine (../trust/verifier.ts). */
  readonly verifier: Verifier;
  /** Heartbeats, who is alive, who is revoked. */
  readonly workers: WorkerRoster;
  private readonly attempts: AttemptDeps;

  constructor(
    private readonly opts: RunManagerOptions,
    private readonly events: RunManagerEvents = {},
  ) {
    this.now = opts.now ?? Date.now;
    this.loop = new ReconcileLoop(() => this.pass(), { tickMs: opts.tickMs ?? 1000, passDelayMs: opts.passDelayMs ?? 50, log: opts.log });
    this.workers = new WorkerRoster({ store: opts.store, log: opts.log, now: this.now, workerTimeoutMs: opts.workerTimeoutMs ?? 20_000 });
    this.queueSlack = opts.queueSlack ?? 1;
    this.queueSlackPerWorker = opts.queueSlackPerWorker ?? 0.02;
    this.checkpoints = new CheckpointFiles(join(opts.dataDir, 'checkpoints'), opts.store, opts.log.child({ part: 'checkpoints' }));
    this.verifier = new Verifier({
      store: opts.store,
      queue: opts.queue,
      log: opts.log,
      now: this.now,
      liveWorkerBesides: (excluded) => this.store.hasLiveWorkerOutside(this.workers.aliveSince(), [...excluded, ...this.workers.revokedIds()]),
      onQuarantine: (workerId, runId) => this.dropResultsOf(workerId, runId),
    });
    this.champion = new ChampionPhase({
      store: opts.store,
      queue: opts.queue,
      log: opts.log,
      dataDir: opts.dataDir,
      now: this.now,
      testSplit: () => this.testSplit!,
      onFinished: (run) => this.events.runFinished?.(run),
      eligible: (ev) => this.verifier.counts(ev),
    });
    this.attempts = { store: opts.store, log: opts.log, now: this.now, configOf: (runId) => this.configOf(runId), onSearchGivenUp: (ev) => this.dropCheckpointUnlessInherited(ev) };
  }

  get store(): RunStore {
    return this.opts.store;
  }

  /** The run being driven, freshly read from the store. */
  currentRun(): RunRecord | null {
    return this.run ? this.store.getRun(this.run.id) : null;
  }

  /** Prepares the dataset, records a new run and starts searching. */
  async startRun(given: RunConfig | PreparedRun): Promise<RunRecord> {
    // Reads, splits and encodes the data (nothing is written if that fails), then stores it.
    const { config, loaded } = 'loaded' in given ? given : await prepareRun(given, this.opts.log);
    const { dataset: prepared, preparation } = loaded;
    const dataset = await storeDataset(prepared, this.opts.dataDir, preparation);
    const id = `r${this.now().toString(36)}${randomBytes(3).toString('hex')}`;
    this.store.transaction(() => {
      this.store.createRun({ id, name: config.name, config, seed: config.seed, dataset, now: this.now() });
      this.store.logEvent(id, 'run-created', { name: config.name, dataset: dataset.manifest.sha256 });
      logReference(this.store, { id, config, seed: config.seed, dataset });
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
    const context = searchContextOf(run);
    const { space, data } = context;
    const testSplit = decodeShard(await readFile(run.dataset.testPath)).train;
    const algorithm = createSearchAlgorithm(
      run.config.search.algorithm,
      (({ algorithm: _algorithm, ...settings }) => settings)(run.config.search),
      context,
      (this.store.searchSnapshot(run.id) as Parameters<typeof createSearchAlgorithm>[3]) ?? undefined,
    );
    // Only now, with everything ready, does the reconcile loop see the run.
    this.space = space;
    this.data = data;
    this.testSplit = testSplit;
    this.algorithm = algorithm;
    this.finishRequested = this.store.events(run.id, 'run-finish-requested').length > 0;
    const trainCount = run.dataset.manifest.trainCount;
    this.samplesSpent = run.config.budget.maxSamples === undefined ? 0 : this.store.evaluations(run.id, 'search').reduce((sum, e) => sum + (e.state === 'done' && e.result ? newSamples(e.result, trainCount) : 0), 0);
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
    await this.verifier.rebuildQueue(run.id);
    if (added > 0) {
      this.store.logEvent(run.id, 'queue-rebuilt', { reason, pending: pending.length, added });
      this.opts.log.warn({ reason, pending: pending.length, added }, 'queue rebuilt from the store');
    }
  }

  /** Starts the reconcile loop (and listens for finished jobs, to record them within `passDelayMs`). */
  async startLoop(): Promise<void> {
    await this.opts.queue.watch(() => this.loop.passAfterFinish());
    await this.loop.start();
  }

  stopLoop(): Promise<void> {
    return this.loop.stop();
  }

  /** One pass: record finished jobs, move the run's phase on, top up the queue. Never runs twice at once. */
  tick(): Promise<void> {
    return this.loop.tick();
  }

  /**
   * One reconcile pass. Every search result and failed attempt that finished since the last pass,
   * and every new proposal they make room for, is written to the store in ONE transaction with one
   * save of the search algorithm's state; only then are the jobs added to and removed from Redis,
   * in bulk. A crash between the two is safe: on restart the store re-adds what it still owes, and
   * finished jobs still in Redis are recognised as already recorded.
   * Champion trainings (few, and scored here on the test split) and verification re-runs are
   * handled one at a time after.
   */
  private async pass(): Promise<void> {
    if (!this.run) return;
    const [marker, finished] = await Promise.all([this.opts.queue.checkMarker(this.run.id), this.opts.queue.finished()]);
    if (marker === 'lost') await this.rebuildQueue('Redis holds none of this coordinator\'s keys (flushed or restarted empty)');
    const batch = emptyBatch();
    const championJobs: FinishedJob[] = [];
    const verificationJobs: FinishedJob[] = [];
    this.store.transaction(() => {
      for (const job of finished) {
        const handled = this.reconcileSearchJob(job, batch);
        if (handled === 'champion') championJobs.push(job);
        else if (handled === 'verification') verificationJobs.push(job);
      }
      const run = this.currentRun();
      if (run?.state === 'searching' && !this.searchBudgetSpent(run)) this.proposeUpToTarget(run, batch);
      if (batch.searchChanged) this.store.saveSearchSnapshot(this.run!.id, this.algorithm!.snapshot());
    });
    await this.opts.queue.removeMany(batch.remove);
    await this.opts.queue.addMany(batch.add);
    if (!this.finishRequested && this.sampleBudgetReached(this.run.id)) {
      // Not awaited: the finish waits for this pass to end.
      void this.control(this.run.id, 'finish', { discardInFlight: true }).catch((err: Error) => this.opts.log.error({ err }, 'finishing at the sample budget failed'));
    }
    for (const { evaluationId, result } of batch.recorded) this.events.resultRecorded?.(this.store.getEvaluation(evaluationId)!, result);
    for (const job of verificationJobs) await this.verifier.reconcile(job);
    for (const job of championJobs) await this.reconcileChampionJob(job);
    const run = this.currentRun();
    if (!run) return;
    for (const { evaluationId } of batch.recorded) await this.verifier.afterSearchResult(run, evaluationId);
    await this.verifier.checkTimeouts(run);
    if (run.state === 'searching' && this.searchBudgetSpent(run)) {
      const counts = this.store.counts(run.id, 'search');
      // Champion candidates are verified on another worker first (and open spot checks settled);
      // the reference network, retrained only to be compared with, is not.
      if (counts.queued + counts.running === 0 && (await this.verifier.readyForChampion(run, this.champion.chooseCandidates(run).candidates.filter((c) => c.champion !== false || c.ensemblePosition !== undefined)))) await this.champion.begin(run);
    } else if (run.state === 'training-champion') await this.champion.ensureJobs(run);
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
    if (!run) throw new NetbreederError('NB_NO_RUN', `no run ${runId}`);
    const next = controlTarget(action, run.state);
    if (!next) throw new RunStateError(`cannot ${action} run ${runId} while it is ${run.state}`);
    this.store.transaction(() => {
      if (next !== run.state) this.store.setRunState(runId, next, { now: this.now() });
      this.store.logEvent(runId, CONTROL_EVENTS[action], { from: run.state, action, ...(opts.discardInFlight ? { discardInFlight: true } : {}) });
    });
    if (action === 'finish' && runId === this.run?.id) this.finishRequested = true;
    this.opts.log.info({ runId, from: run.state, to: next }, `run ${action}`);
    if (action === 'stop') {
      await this.cancelPending(runId, 'run stopped');
      await this.verifier.cancel(runId);
    }
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
    if (!run || run.id !== this.run?.id) throw new RunStateError(`run ${runId} is not the run this coordinator drives`);
    if (run.state !== 'searching' && run.state !== 'paused') throw new RunStateError(`run ${runId} is ${run.state}; genomes can be added while it searches`);
    const check = checkGenome(value, this.space, this.data!);
    if (!check.ok) {
      const issues = check.issues.map((i) => (i.nodeId ? `node '${i.nodeId}': ${i.message}` : i.message));
      this.store.addSearchStep(rejectStep(run.id, 'genome', { evaluationId: null, genomeHash: null }, issues, this.now()));
      throw new GenomeRejectedError(issues);
    }
    const genome = canonicalGenome(check.genome);
    const proposal: Proposal = { genome, genomeHash: genomeHash(genome), parentHashes: [], mutation: null, reason: 'submitted by the user' };
    const job = this.store.transaction(() => recordProposal(this.store, this.store.getRun(run.id)!, proposal, check.analysis, this.now(), 'submit'));
    await this.opts.queue.add(job);
    return this.store.getEvaluation(job.evaluationId)!;
  }

  // ---- search phase --------------------------------------------------------------------------

  /** True once the driven run's recorded search results spent its `budget.maxSamples`. */
  private sampleBudgetReached(runId: string): boolean {
    const limit = this.run?.id === runId ? this.run.config.budget.maxSamples : undefined;
    return limit !== undefined && this.samplesSpent >= limit;
  }

  /** True once the run's search is done: its budget spent, or a finish asked. */
  searchBudgetSpent(run: RunRecord): boolean {
    if (this.finishRequested || this.sampleBudgetReached(run.id)) return true;
    const elapsedMin = (this.now() - (run.searchStartedAt ?? run.createdAt)) / 60_000;
    return run.proposals >= run.config.budget.maxEvaluations || elapsedMin >= run.config.budget.maxMinutes;
  }

  /** Proposes until one evaluation is in flight per alive worker plus the slack (inside the pass's transaction). */
  private proposeUpToTarget(run: RunRecord, batch: QueueBatch): void {
    const counts = this.store.counts(run.id, 'search');
    const alive = this.workers.aliveCount();
    const target = Math.max(2, alive + Math.ceil(this.queueSlack + alive * this.queueSlackPerWorker));
    const o = { store: this.store, log: this.opts.log, now: this.now() };
    batch.add.push(...proposeMore(o, this.algorithm!, run, this.data!, target - counts.queued - counts.running, () => (batch.searchChanged = true)));
  }

  // ---- results -------------------------------------------------------------------------------

  /**
   * Handles one finished job inside the pass's transaction: a search result or failed attempt, a job
   * that names no evaluation, or one already recorded (`'recorded'`). Does nothing for a champion
   * training still owed a result (`'champion'`: that goes through {@link reconcileChampionJob}) or a
   * verification re-run (`'verification'`: the verifier's).
   */
  private reconcileSearchJob(job: FinishedJob, batch: QueueBatch): 'recorded' | 'champion' | 'verification' {
    const ev = this.store.getEvaluation(job.id);
    if (ev?.kind === 'champion' && (ev.state === 'queued' || ev.state === 'running')) return 'champion';
    if (!ev && this.verifier.owns(job.id)) return 'verification';
    if (!ev) {
      this.store.logEvent(null, 'rejected-result', { evaluationId: job.id, reason: 'unknown evaluation id' });
      this.opts.log.warn({ evaluationId: job.id }, 'finished job names no evaluation of this store; removed');
    } else if (ev.state === 'done' || ev.state === 'failed') {
      this.opts.log.debug({ evaluationId: job.id }, 'result already recorded; duplicate ignored');
    } else if (job.state === 'completed') {
      const problem = this.resultProblem(ev, job.returnvalue);
      if (problem) {
        rejectResult(this.attempts, ev, problem, batch);
        return 'recorded';
      }
      if (ev.kind === 'search' && this.sampleBudgetReached(ev.runId)) this.store.recordFailure(ev.id, DISCARDED_AT_FINISH, this.now());
      else this.recordSearchResult(ev, job.returnvalue as EvaluationResult, batch);
    } else {
      recordFailedAttempt(this.attempts, ev, job.failedReason ?? 'failed', job.unrecoverable, batch);
    }
    batch.remove.push(job.id);
    return 'recorded';
  }

  /** Records a champion training's outcome (scored on the test split here), then carries out its queue work. */
  private async reconcileChampionJob(job: FinishedJob): Promise<void> {
    const ev = this.store.getEvaluation(job.id)!;
    const batch = emptyBatch();
    let givenUp = false;
    if (job.state === 'completed') {
      const problem = this.resultProblem(ev, job.returnvalue);
      if (problem) this.store.transaction(() => rejectResult(this.attempts, ev, problem, batch));
      else {
        // Told before it is scored: scoring the last final training may end the run.
        this.events.resultRecorded?.(ev, job.returnvalue as EvaluationResult);
        await this.champion.recordResult(ev, job.returnvalue as EvaluationResult);
        batch.remove.push(job.id);
      }
    } else {
      givenUp = this.store.transaction(() => recordFailedAttempt(this.attempts, ev, job.failedReason ?? 'failed', job.unrecoverable, batch));
      batch.remove.push(job.id);
    }
    await this.opts.queue.removeMany(batch.remove);
    await this.opts.queue.addMany(batch.add);
    if (givenUp) await this.champion.attemptGivenUp(ev.runId);
  }

  /** The configuration of `runId` (the driven run's is kept in memory; a run's config never changes). */
  private configOf(runId: string): RunConfig {
    return runId === this.run?.id ? this.run.config : this.store.getRun(runId)!.config;
  }

  /** Why a returned value cannot be recorded for `ev`, or null when it can (see `resultProblem`). */
  private resultProblem(ev: EvaluationRecord, value: unknown): string | null {
    return resultProblem(ev, value, { config: this.configOf(ev.runId), isRevoked: (w) => this.workers.isRevoked(w), isQuarantined: (w) => this.verifier.isQuarantined(w) });
  }

  private recordSearchResult(ev: EvaluationRecord, result: EvaluationResult, batch: QueueBatch): void {
    if (this.store.recordResult(ev.id, result, this.now()) !== 'recorded') return;
    if (ev.runId === this.run?.id) this.samplesSpent += newSamples(result, this.run.dataset.manifest.trainCount);
    const observation = observationFor(ev, result);
    const decisions = this.algorithm!.observe(observation);
    this.store.addSearchStep(observeStep(ev.runId, observation, decisions, this.now()));
    batch.searchChanged = true;
    batch.recorded.push({ evaluationId: ev.id, result });
    this.dropCheckpointUnlessInherited(ev);
    this.opts.log.info(
      { evaluationId: ev.id, valAccuracy: result.valAccuracy, params: result.paramCount, seconds: result.trainSeconds, worker: result.workerId },
      'evaluation recorded',
    );
  }

  /** A worker was quarantined: its results leave the search's population (see `forgetWorkerResults`). */
  private dropResultsOf(workerId: string, runId: string): void {
    if (!this.algorithm || this.run?.id !== runId) return;
    forgetWorkerResults({ store: this.store, log: this.opts.log, now: this.now() }, this.algorithm, workerId, runId);
  }

  /** True when this worker's results no longer count (it failed verification repeatedly). */
  isQuarantined(workerId: string): boolean {
    return this.verifier.isQuarantined(workerId);
  }

  /** Without weight inheritance nothing continues a finished (or given-up) training: its checkpoint file can go. */
  private dropCheckpointUnlessInherited(ev: EvaluationRecord): void {
    if (checkpointSettings(this.configOf(ev.runId)).inheritance) return;
    void this.checkpoints.drop(ev.runId, ev.seq).catch((err: Error) => this.opts.log.warn({ evaluationId: ev.id, err: err.message }, 'cannot delete a checkpoint file'));
  }
}
