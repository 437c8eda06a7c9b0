import { randomBytes } from 'node:crypto';
import { readFile } from 'node:fs/promises';
import { join } from 'node:path';
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
  headUnits,
  evaluationResultValidator,
  spaceIssuesForData,
  ValidationError,
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
import { createSearchAlgorithm, forgetResults, type Proposal, type SearchAlgorithm } from '../search/index.js';
import { storeDataset } from './store-dataset.js';
import { loadDataset } from '../importers/index.js';
import { ChampionPhase } from './champion-phase.js';
import { controlTarget, type RunControl } from './run-lifecycle.js';
import { CheckpointFiles } from '../checkpoints/checkpoint-files.js';
import { checkpointPolicy, checkpointSettings, inheritedWeights, resumeRef } from './checkpoint-policy.js';
import { Verifier } from '../trust/verifier.js';
import { observationFor, observeStep, proposalStep, rejectStep } from './search-record.js';
import { logReference, searchContextOf } from './reference-network.js';
import { newSamples } from './sample-budget.js';

/** How the run manager paces itself. */
export interface RunManagerOptions {
  store: RunStore;
  queue: EvaluationQueue;
  log: Logger;
  /** Folder for datasets and champion exports. */
  dataDir: string;
  /** Milliseconds between reconcile passes. @default 1000 */
  tickMs?: number;
  /**
   * How long a finished job waits for others before the pass that records it, so results that
   * arrive one by one (a thousand workers finish about a hundred jobs a second, each at its own
   * moment) share one pass and its commit instead of paying for a pass each. The queued slack
   * covers the wait: a worker that frees up finds its next job already queued. 0: a pass at once.
   * @default 50
   */
  passDelayMs?: number;
  /** A worker counts as alive while its last heartbeat is younger than this. @default 20000 */
  workerTimeoutMs?: number;
  /**
   * Evaluations kept queued beyond one per alive worker, so a worker that frees up finds its next
   * job waiting: `queueSlack` plus `queueSlackPerWorker` times the alive workers (rounded up).
   * A dozen PCs get 1 spare job; a thousand get 21, enough for the results that arrive while one
   * reconcile pass runs. More slack means proposals made from slightly older results.
   * @default 1 and 0.02
   */
  queueSlack?: number;
  queueSlackPerWorker?: number;
  /** Clock, for tests. @default Date.now */
  now?: () => number;
}

/** Events a watcher (the demo, the CLI) can follow. */
export interface RunManagerEvents {
  resultRecorded?: (evaluation: EvaluationRecord, result: EvaluationResult) => void;
  runFinished?: (run: RunRecord) => void;
}

/** What an admin can do to a run (./run-lifecycle.ts). */
export type { RunControl } from './run-lifecycle.js';

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
  /** The pass that finished jobs asked for, while it waits out `passDelayMs`. */
  private passSoon: NodeJS.Timeout | null = null;
  /** True once `finish` was asked for the current run (also read back from the store on attach). */
  private finishRequested = false;
  /** Samples the driven run's recorded search results spent (see `budget.maxSamples`). */
  private samplesSpent = 0;
  private readonly now: () => number;
  private readonly tickMs: number;
  private readonly passDelayMs: number;
  private readonly workerTimeoutMs: number;
  private readonly queueSlack: number;
  private readonly queueSlackPerWorker: number;
  private readonly champion: ChampionPhase;
  /** Training checkpoints workers upload (files under `<dataDir>/checkpoints`, latest per evaluation sequence in the store). */
  readonly checkpoints: CheckpointFiles;
  /** Replicated verification, worker trust and quarantine (../trust/verifier.ts). */
  readonly verifier: Verifier;

  constructor(
    private readonly opts: RunManagerOptions,
    private readonly events: RunManagerEvents = {},
  ) {
    this.now = opts.now ?? Date.now;
    this.tickMs = opts.tickMs ?? 1000;
    this.passDelayMs = opts.passDelayMs ?? 50;
    this.workerTimeoutMs = opts.workerTimeoutMs ?? 20_000;
    this.queueSlack = opts.queueSlack ?? 1;
    this.queueSlackPerWorker = opts.queueSlackPerWorker ?? 0.02;
    this.checkpoints = new CheckpointFiles(join(opts.dataDir, 'checkpoints'), opts.store, opts.log.child({ part: 'checkpoints' }));
    this.verifier = new Verifier({
      store: opts.store,
      queue: opts.queue,
      log: opts.log,
      now: this.now,
      liveWorkerBesides: (excluded) => this.store.hasLiveWorkerOutside(this.now() - this.workerTimeoutMs, [...excluded, ...this.revokedIds()]),
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
    const spaceIssues = spaceIssuesForData(config.searchSpace ?? defaultSearchSpace(), { inputShape: prepared.inputShape, numClasses: prepared.classNames.length, ...(prepared.target ? { target: prepared.target } : {}) });
    if (spaceIssues.length) throw new ValidationError('run configuration', spaceIssues.map((message) => ({ path: '/searchSpace', message })));
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
    await this.opts.queue.watch(() => this.passAfterFinish());
    this.timer = setInterval(() => void this.tick(), this.tickMs);
    await this.tick();
  }

  async stopLoop(): Promise<void> {
    if (this.timer) clearInterval(this.timer);
    this.timer = null;
    if (this.passSoon) clearTimeout(this.passSoon);
    this.passSoon = null;
    await this.ticking;
  }

  /** A job finished: a pass after `passDelayMs` (one pass for every job that finishes meanwhile), or right after the running one. */
  private passAfterFinish(): void {
    if (this.ticking || this.passDelayMs <= 0) return void this.tick(); // tick() marks a running pass to go again
    if (this.passSoon || !this.timer) return;
    this.passSoon = setTimeout(() => {
      this.passSoon = null;
      void this.tick();
    }, this.passDelayMs);
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

  /** Takes a worker's heartbeat (refused for a revoked worker); the store writes it with the others of this moment (`RunStore.takeHeartbeat`). */
  recordHeartbeat(hb: WorkerHeartbeat): void {
    if (this.isRevoked(hb.workerId)) throw new Error(`worker ${hb.workerId} is revoked`);
    this.store.takeHeartbeat(hb, this.now());
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
    return this.revokedIds().has(workerId);
  }

  /** The workers whose results and heartbeats are refused (read from the event log once). */
  private revokedIds(): Set<string> {
    this.revoked ??= new Set(this.store.events(null, 'worker-revoked').map((e) => (e.detail as { workerId: string }).workerId));
    return this.revoked;
  }

  /** Refuses every later result and heartbeat of `workerId` (a PC that misbehaves or left the office). */
  revokeWorker(workerId: string, reason: string): void {
    if (this.isRevoked(workerId)) return;
    this.store.logEvent(null, 'worker-revoked', { workerId, reason });
    this.revokedIds().add(workerId);
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
    const next = controlTarget(action, run.state);
    if (!next) throw new RunStateError(`cannot ${action} run ${runId} while it is ${run.state}`);
    this.store.transaction(() => {
      if (next !== run.state) this.store.setRunState(runId, next, { now: this.now() });
      this.store.logEvent(runId, action === 'finish' ? 'run-finish-requested' : `run-${next}`, { from: run.state, action, ...(opts.discardInFlight ? { discardInFlight: true } : {}) });
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
    if (!run || run.id !== this.run?.id) throw new Error(`run ${runId} is not the run this coordinator drives`);
    if (run.state !== 'searching' && run.state !== 'paused') throw new RunStateError(`run ${runId} is ${run.state}; genomes can be added while it searches`);
    const check = checkGenome(value, this.space, this.data!);
    if (!check.ok) {
      const issues = check.issues.map((i) => (i.nodeId ? `node '${i.nodeId}': ${i.message}` : i.message));
      this.store.addSearchStep(rejectStep(run.id, 'genome', { evaluationId: null, genomeHash: null }, issues, this.now()));
      throw new GenomeRejectedError(issues);
    }
    const genome = canonicalGenome(check.genome);
    const proposal: Proposal = { genome, genomeHash: genomeHash(genome), parentHashes: [], mutation: null, reason: 'submitted by the user' };
    const job = this.store.transaction(() => this.recordProposal(this.store.getRun(run.id)!, proposal, check.analysis, 'submit'));
    await this.opts.queue.add(job);
    return this.store.getEvaluation(job.evaluationId)!;
  }

  // ---- search phase --------------------------------------------------------------------------

  /** True once the driven run's recorded search results spent its `budget.maxSamples`. */
  private sampleBudgetReached(runId: string): boolean {
    const limit = this.run?.id === runId ? this.run.config.budget.maxSamples : undefined;
    return limit !== undefined && this.samplesSpent >= limit;
  }

  private searchBudgetSpent(run: RunRecord): boolean {
    if (this.finishRequested || this.sampleBudgetReached(run.id)) return true;
    const elapsedMin = (this.now() - (run.searchStartedAt ?? run.createdAt)) / 60_000;
    return run.proposals >= run.config.budget.maxEvaluations || elapsedMin >= run.config.budget.maxMinutes;
  }

  /** Proposes until one evaluation is in flight per alive worker plus the slack (inside the pass's transaction). */
  private proposeUpToTarget(run: RunRecord, batch: QueueBatch): void {
    const counts = this.store.counts(run.id, 'search');
    const alive = this.aliveWorkers();
    const target = Math.max(2, alive + Math.ceil(this.queueSlack + alive * this.queueSlackPerWorker));
    let current = run;
    for (let n = counts.queued + counts.running; n < target && current.proposals < run.config.budget.maxEvaluations; n++) {
      const proposal = this.algorithm!.propose();
      batch.searchChanged = true;
      const analysis = analyzeGenome(proposal.genome, this.data!);
      if (!analysis.ok) {
        // A bug in the search, never expected: the refusal is recorded with the call, and nothing is queued.
        const issues = analysis.issues.map((i) => i.message);
        this.store.addSearchStep(proposalStep(run.id, 'propose', null, proposal, this.now()));
        this.store.addSearchStep(rejectStep(run.id, 'genome', { evaluationId: null, genomeHash: proposal.genomeHash }, issues, this.now()));
        this.opts.log.error({ runId: run.id, genomeHash: proposal.genomeHash, issues }, 'search proposed an invalid genome; refused and recorded');
        continue;
      }
      batch.add.push(this.recordProposal(current, proposal, analysis.analysis));
      current = { ...current, proposals: current.proposals + 1 };
    }
  }

  /**
   * Records a proposal (genome, evaluation, its search step with the decisions, lineage) as
   * evaluation number `run.proposals` of the run and returns its job; the caller is inside a
   * transaction, saves the algorithm's state and queues the job. `step`: `submit` for a user's
   * genome (the algorithm was not asked, so replay does not ask it either).
   */
  private recordProposal(run: RunRecord, proposal: Proposal, analysis: GenomeAnalysis, step: 'propose' | 'submit' = 'propose'): EvaluationJob {
    const seq = run.proposals;
    const job: EvaluationJob = {
      schemaVersion: EVALUATION_JOB_VERSION,
      kind: 'search',
      evaluationId: evaluationId(run.id, seq, 1),
      runId: run.id,
      attempt: 1,
      genome: proposal.genome,
      genomeHash: proposal.genomeHash,
      seed: evaluationSeed(run.seed, seq),
      budget: { epochs: proposal.budgetEpochs ?? proposal.genome.training.epochs, maxSeconds: run.config.evaluation.maxSeconds },
      dataset: run.dataset.manifest,
    };
    const policy = checkpointPolicy(run.config);
    if (policy) job.checkpoints = policy;
    const inherit = inheritedWeights(this.store, run.config, run.id, proposal);
    if (inherit) job.inherit = inherit;
    this.store.putGenome({
      hash: proposal.genomeHash,
      genome: proposal.genome,
      params: analysis.params,
      flops: analysis.flops,
      summary: describeGenome(proposal.genome, headUnits(this.data!)),
    });
    this.store.addEvaluation(job, seq, this.now(), true);
    this.store.addSearchStep(proposalStep(run.id, step, job.evaluationId, proposal, this.now()));
    for (const parent of proposal.parentHashes) {
      this.store.addLineage(run.id, {
        evaluationId: job.evaluationId,
        childHash: proposal.genomeHash,
        parentHash: parent,
        operator: proposal.mutation?.operator ?? 'none',
        detail: proposal.mutation?.detail ?? proposal.reason,
      });
    }
    return job;
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
        this.rejectResult(ev, problem, batch);
        return 'recorded';
      }
      if (ev.kind === 'search' && this.sampleBudgetReached(ev.runId)) this.store.recordFailure(ev.id, DISCARDED_AT_FINISH, this.now());
      else this.recordSearchResult(ev, job.returnvalue as EvaluationResult, batch);
    } else {
      this.recordFailedAttempt(ev, job.failedReason ?? 'failed', job.unrecoverable, batch);
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
      if (problem) this.store.transaction(() => this.rejectResult(ev, problem, batch));
      else {
        await this.champion.recordResult(ev, job.returnvalue as EvaluationResult);
        batch.remove.push(job.id);
      }
    } else {
      givenUp = this.store.transaction(() => this.recordFailedAttempt(ev, job.failedReason ?? 'failed', job.unrecoverable, batch));
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

  /**
   * A result that cannot be recorded changes nothing but the event log: the same job goes back in
   * the queue for another worker. Past `maxAttempts` rejections the attempt counts as failed.
   */
  private rejectResult(ev: EvaluationRecord, problem: string, batch: QueueBatch): void {
    this.store.logEvent(ev.runId, 'rejected-result', { evaluationId: ev.id, reason: problem });
    if (ev.kind === 'search') this.store.addSearchStep(rejectStep(ev.runId, 'result', { evaluationId: ev.id, genomeHash: ev.genomeHash }, [problem], this.now()));
    this.opts.log.warn({ evaluationId: ev.id, reason: problem }, 'result rejected; the job goes back in the queue');
    batch.remove.push(ev.id);
    if (this.store.countEventsNaming(ev.runId, 'rejected-result', ev.id) >= this.configOf(ev.runId).evaluation.maxAttempts) {
      this.recordFailedAttempt(ev, `every result for it was rejected; the last because ${problem}`, false, batch);
    } else {
      batch.add.push(ev.job);
    }
  }

  /** Why a returned value cannot be recorded for `ev`, or null when it can. */
  private resultProblem(ev: EvaluationRecord, value: unknown): string | null {
    const issues = evaluationResultValidator.issues(value);
    if (issues.length) return issues.slice(0, 5).map((i) => `${i.path || '(root)'} ${i.message}`).join('; ');
    const result = value as EvaluationResult;
    if (result.evaluationId !== ev.id) return `result names evaluation ${result.evaluationId}, not ${ev.id}`;
    if (this.isRevoked(result.workerId)) return `worker ${result.workerId} is revoked`;
    if (this.verifier.isQuarantined(result.workerId)) return `worker ${result.workerId} is quarantined (its results failed verification); another worker will run it`;
    if (ev.kind === 'search' && (result.valAccuracy === null || result.valLoss === null)) return 'a search result needs validation accuracy and loss';
    if (ev.kind === 'search' && result.latencyMsPerSample === undefined && this.run?.config.search.algorithm === 'pareto-evolution' && this.run.config.search.objective === 'latency') {
      return 'this run weighs accuracy against measured latency, and the result has none (a worker older than latency measurement: update it)';
    }
    if (ev.kind === 'champion' && !result.model) return 'a champion result needs the trained model';
    return null;
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

  /**
   * A worker was quarantined: its results leave the search's population (they no longer count for
   * selection; the champion phase skips them through `verifier.counts`). Logged with how many.
   */
  private dropResultsOf(workerId: string, runId: string): void {
    if (!this.algorithm || this.run?.id !== runId) return;
    const reason = `worker ${workerId} was quarantined (its results failed verification): its results no longer count`;
    const decision = forgetResults(this.algorithm, (id) => this.store.getEvaluation(id)?.workerId === workerId, reason);
    const dropped = decision.kind === 'results-forgotten' ? decision.evaluationIds.length : 0;
    this.store.transaction(() => {
      this.store.addSearchStep({ runId, kind: 'forget', evaluationId: null, genomeHash: null, parentHashes: [], budgetEpochs: null, reason, decisions: [decision], at: this.now() });
      this.store.saveSearchSnapshot(runId, this.algorithm!.snapshot());
      this.store.logEvent(runId, 'quarantined-results-dropped', { workerId, droppedFromPopulation: dropped });
    });
    this.opts.log.warn({ workerId, dropped }, 'results of a quarantined worker dropped from the search population');
  }

  /** True when this worker's results no longer count (it failed verification repeatedly). */
  isQuarantined(workerId: string): boolean {
    return this.verifier.isQuarantined(workerId);
  }

  /**
   * Records a failed attempt and, unless it cannot succeed, the next attempt (queued with the
   * batch). Returns true when the evaluation was given up.
   */
  private recordFailedAttempt(ev: EvaluationRecord, reason: string, unrecoverable: boolean, batch: QueueBatch): boolean {
    const canRetry = !unrecoverable && ev.attempt < this.configOf(ev.runId).evaluation.maxAttempts;
    const next: EvaluationJob | null = canRetry
      ? { ...ev.job, attempt: ev.attempt + 1, evaluationId: evaluationId(ev.runId, ev.seq, ev.attempt + 1, ev.kind) }
      : null;
    // The next attempt resumes from the latest checkpoint any attempt of this evaluation uploaded.
    const resume = next && ev.kind === 'search' ? resumeRef(this.store, ev.runId, ev.seq) : undefined;
    if (next && resume) next.resume = resume;
    if (this.store.recordFailure(ev.id, reason, this.now()) !== 'recorded') return false;
    if (next) {
      this.store.addEvaluation(next, ev.seq, this.now(), false);
      this.store.logEvent(ev.runId, 'reissued', { evaluationId: ev.id, next: next.evaluationId, reason });
      batch.add.push(next);
    } else {
      this.store.logEvent(ev.runId, 'genome-failing', { evaluationId: ev.id, genomeHash: ev.genomeHash, attempts: ev.attempt, reason });
      if (ev.kind === 'search') this.dropCheckpointUnlessInherited(ev);
    }
    this.opts.log.warn({ evaluationId: ev.id, reason, reissuedAs: next?.evaluationId ?? null }, 'evaluation attempt failed');
    return next === null;
  }

  /** Without weight inheritance nothing continues a finished (or given-up) training: its checkpoint file can go. */
  private dropCheckpointUnlessInherited(ev: EvaluationRecord): void {
    if (checkpointSettings(this.configOf(ev.runId)).inheritance) return;
    void this.checkpoints.drop(ev.runId, ev.seq).catch((err: Error) => this.opts.log.warn({ evaluationId: ev.id, err: err.message }, 'cannot delete a checkpoint file'));
  }
}

/** Queue work and notifications a pass decided, carried out once its transaction has committed. */
interface QueueBatch {
  add: EvaluationJob[];
  remove: string[];
  recorded: Array<{ evaluationId: string; result: EvaluationResult }>;
  /** True when the search algorithm saw a result or made a proposal, so its state must be saved. */
  searchChanged: boolean;
}

const emptyBatch = (): QueueBatch => ({ add: [], remove: [], recorded: [], searchChanged: false });
