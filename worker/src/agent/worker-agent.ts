import { hostname, loadavg, setPriority } from 'node:os';
import { UnrecoverableError, WaitingError, Worker, type Job } from 'bullmq';
import type { Redis } from 'ioredis';
import type { Logger } from 'pino';
import {
  dataShapeOf,
  DO_NOT_RETRY_PREFIX,
  EVALUATION_RESULT_VERSION,
  WORKER_PROTOCOL_VERSION,
  evaluationJobValidator,
  evaluationResultValidator,
  type BackendName,
  type EvaluationJob,
  type EvaluationResult,
  type WorkerHeartbeat,
  type WorkerState,
} from '@netbreeder/shared-types';
import { TrainingProcess } from '../training/training-process.js';
import { isRetryable } from '../training/errors.js';
import { DatasetCache } from './dataset-cache.js';
import { CheckpointClient } from './checkpoint-client.js';
import type { StartCheckpoint } from '../training/training-checkpoint.js';
import { HeartbeatSender } from './heartbeat-sender.js';
import { openRedis } from './redis-connection.js';
import { assertTestModeAllowed, coreCount, type WorkerOptions } from './worker-options.js';
import { inflateOutcome } from './lying-worker.js';
import { msUntilClockTime } from './stop-time.js';
import type { Trainer } from './trainer.js';
import { backendSentence } from '../training/backend.js';

/** Parts a {@link WorkerAgent} can be given instead of building its own. */
export interface WorkerAgentParts {
  /** What trains the jobs. @default a `TrainingProcess` (the training child process) */
  trainer?: Trainer;
  /** Dataset cache, shared by agents running in one process. @default one of its own in `options.cacheDir` */
  cache?: DatasetCache;
}

export const WORKER_VERSION = '0.1.0';

/**
 * One worker: pulls evaluation jobs from the queue one at a time, trains each in its training child
 * process (never on this event loop, so BullMQ's lock renewal and the heartbeats keep running), and
 * returns the result as the job's return value.
 *
 * Lifecycle: starting → idle ⇄ training → draining → stopped. `stop()` finishes the current job
 * first; `stop({ force: true })` kills the training and leaves the job to be reissued.
 */
export class WorkerAgent {
  private state: WorkerState = 'starting';
  private current: string | null = null;
  private done = 0;
  private failed = 0;
  private lastSamplesPerSecond = 0;
  private backend: BackendName | null = null;
  private backendReason = 'not started';
  private readonly training: Trainer;
  private readonly cache: DatasetCache;
  private readonly heartbeat: HeartbeatSender;
  private readonly checkpoints: CheckpointClient;
  private connection: Redis | null = null;
  private worker: Worker | null = null;
  private stopTimer: NodeJS.Timeout | null = null;
  private idleTimer: NodeJS.Timeout | null = null;
  private stopping: Promise<void> | null = null;
  private readonly host = hostname();
  /** Set once the coordinator says this worker is quarantined: it then takes no more jobs. */
  private quarantined = false;
  /** Why the worker stopped on its own when retrying cannot help (a refused token), as one sentence; else null. */
  fatal: string | null = null;
  private markStopped: () => void = () => {};
  /** Settles once the worker has stopped (after `stop()`, a stop time, or a fatal error). */
  readonly stopped: Promise<void> = new Promise((resolve) => (this.markStopped = resolve));

  constructor(
    readonly options: WorkerOptions,
    private readonly log: Logger,
    parts: WorkerAgentParts = {},
  ) {
    if (options.testOnlyInflateAccuracy !== null) {
      assertTestModeAllowed('a worker that inflates its accuracies');
      log.warn({ inflateBy: options.testOnlyInflateAccuracy }, 'TEST ONLY: this worker reports inflated validation accuracies');
    }
    this.training = parts.trainer ?? new TrainingProcess({ memoryCapMb: options.memoryCapMb, log });
    this.cache = parts.cache ?? new DatasetCache(
      { dir: options.cacheDir, maxBytes: options.cacheMaxMb * 1024 * 1024, coordinatorUrl: options.coordinatorUrl, joinToken: options.joinToken },
      log,
    );
    this.checkpoints = new CheckpointClient(
      { coordinatorUrl: options.coordinatorUrl, joinToken: options.joinToken, corruptUploads: process.env.NETBREEDER_TEST_CORRUPT_CHECKPOINT_UPLOADS === '1' },
      log,
    );
    this.heartbeat = new HeartbeatSender(
      options.coordinatorUrl,
      options.heartbeatMs,
      () => this.heartbeatMessage(),
      log,
      options.joinToken,
      (sentence) => {
        // Its results would be refused: give the current job back at once and leave.
        this.fatal = sentence;
        void this.stop({ force: true });
      },
      (reply) => this.onQuarantine(reply.reason),
    );
  }

  /** The worker's lifecycle state. */
  status(): { state: WorkerState; currentEvaluationId: string | null; evaluationsDone: number; evaluationsFailed: number } {
    return { state: this.state, currentEvaluationId: this.current, evaluationsDone: this.done, evaluationsFailed: this.failed };
  }

  async start(): Promise<void> {
    try {
      setPriority(this.options.nice); // the training child inherits it
    } catch (err) {
      this.log.warn({ nice: this.options.nice, err: (err as Error).message }, 'cannot lower scheduling priority; running at normal priority');
    }
    this.heartbeat.start();
    // A refused token stops the worker while its training child starts: that start's failure is no news.
    const choice = await this.training.start().catch((err: unknown) => {
      if (this.stopping) return null;
      throw err;
    });
    if (!choice) return;
    this.backend = choice.backend;
    this.backendReason = choice.reason;
    this.log.info({ backend: choice.backend }, backendSentence(choice));
    this.log.debug({ reason: choice.reason }, 'backends tried');
    if (this.stopping) return; // refused while the training child started

    this.connection = openRedis(this.options.redisUrl, (attempt, delayMs) =>
      this.log.warn({ attempt, delayMs }, 'cannot reach Redis; retrying with backoff'),
    );
    this.connection.on('error', (err: Error) => this.log.debug({ err: err.message }, 'redis connection error'));
    this.worker = new Worker(this.options.queueName, (job, token) => this.process(job, token), {
      connection: this.connection,
      prefix: this.options.prefix,
      concurrency: 1,
      name: this.options.workerId,
      lockDuration: this.options.lockDurationMs,
      stalledInterval: this.options.stalledIntervalMs,
      maxStalledCount: 1,
      autorun: true,
    });
    this.worker.on('error', (err) => this.log.warn({ err: err.message }, 'queue worker error'));
    this.state = 'idle';
    void this.heartbeat.send();
    if (this.options.idleLoad !== null) this.startIdleRule(this.options.idleLoad);
    if (this.options.until) {
      const ms = msUntilClockTime(this.options.until, new Date());
      this.log.info({ until: this.options.until, inMinutes: Math.round(ms / 60_000) }, 'will stop at the set time');
      this.stopTimer = setTimeout(() => void this.stop(), ms);
      this.stopTimer.unref();
    }
  }

  /**
   * The "only when idle" rule: every `idleCheckMs` the 1-minute load average per core, less the one
   * core this worker's own training uses, is compared with `threshold`; above it the worker stops
   * taking new jobs (the current one finishes), below it the worker takes jobs again.
   */
  private startIdleRule(threshold: number): void {
    const check = () => {
      if (!this.worker || this.stopping) return;
      const busyCores = Math.max(0, loadavg()[0]! - (this.state === 'training' ? 1 : 0));
      const load = busyCores / coreCount();
      if (load > threshold && !this.worker.isPaused()) {
        this.log.info({ load: Number(load.toFixed(2)), threshold }, 'the PC is in use: taking no new jobs until it is idle again');
        void this.worker.pause(true);
      } else if (load <= threshold && this.worker.isPaused() && !this.quarantined) {
        this.log.info({ load: Number(load.toFixed(2)), threshold }, 'the PC is idle again: taking jobs');
        void this.worker.resume();
      }
    };
    this.idleTimer = setInterval(check, this.options.idleCheckMs);
    this.idleTimer.unref();
    check();
  }

  /**
   * The coordinator quarantined this worker (its results failed verification): it keeps sending
   * heartbeats, so it stays visible, but takes no more jobs; the current one finishes (its result
   * will be refused and the job handed to another worker).
   */
  private onQuarantine(reason: string): void {
    if (this.quarantined) return;
    this.quarantined = true;
    this.log.error({ reason }, 'the coordinator quarantined this worker; taking no more jobs (check this PC: memory, backend install, cache)');
    void this.worker?.pause(true);
  }

  private heartbeatMessage(): WorkerHeartbeat {
    return {
      schemaVersion: 1,
      workerId: this.options.workerId,
      host: this.host,
      pid: process.pid,
      cores: coreCount(),
      backend: this.backend,
      backendReason: this.backendReason.slice(0, 2000),
      state: this.state,
      currentEvaluationId: this.current,
      evaluationsDone: this.done,
      evaluationsFailed: this.failed,
      samplesPerSecond: this.lastSamplesPerSecond,
      rssBytes: process.memoryUsage.rss(),
      memoryCapMb: this.options.memoryCapMb,
      version: WORKER_VERSION,
      protocol: WORKER_PROTOCOL_VERSION,
      watts: this.options.watts,
      wattsAssumed: this.options.wattsAssumed,
    };
  }

  /** The BullMQ processor: validate, fetch data, train in the child, return the result. */
  private async process(job: Job, token?: string): Promise<EvaluationResult> {
    const issues = evaluationJobValidator.issues(job.data);
    if (issues.length) {
      const reason = issues.slice(0, 5).map((i) => `${i.path} ${i.message}`).join('; ');
      this.log.warn({ jobId: job.id, reason }, 'job payload rejected');
      throw new UnrecoverableError(`${DO_NOT_RETRY_PREFIX}invalid job payload: ${reason}`);
    }
    const payload = job.data as EvaluationJob;
    if (payload.evaluationId !== job.id) throw new UnrecoverableError(`${DO_NOT_RETRY_PREFIX}job id ${job.id} does not match evaluation id ${payload.evaluationId}`);
    if (payload.excludeWorkers?.includes(this.options.workerId)) await this.handBack(job, token);

    this.state = 'training';
    this.current = payload.evaluationId;
    this.heartbeat.notifyChange({ now: true });
    const log = this.log.child({ evaluationId: payload.evaluationId, kind: payload.kind, attempt: payload.attempt });
    try {
      const shardPath = await this.cache.ensure(payload.dataset);
      // BullMQ counts each move to active: above 1, another worker had this job before (it stalled or was handed back).
      const start = await this.startCheckpoint(payload, job.attemptsStarted > 1);
      log.info({ genome: payload.genomeHash.slice(0, 12), epochs: payload.budget.epochs, offered: start ? `${start.kind} ${start.sha256.slice(0, 12)} at epoch ${start.epoch}` : null }, 'training');
      const policy = payload.kind === 'search' ? payload.checkpoints : undefined;
      let uploads = Promise.resolve();
      const outcome = await this.training.train(
        {
          genome: payload.genome,
          data: dataShapeOf(payload.dataset),
          shardPath,
          splits: payload.kind === 'champion' ? 'train+val' : 'train',
          ...(payload.kind === 'champion' && payload.selectionHoldout ? { selectionHoldout: payload.selectionHoldout } : {}),
          budget: payload.budget,
          seed: payload.seed,
          exportModel: payload.kind === 'champion',
          memoryCapMb: this.options.memoryCapMb,
          start,
          checkpoints: policy && { everyEpochs: policy.everyEpochs, final: policy.final, runId: payload.runId, evaluationId: payload.evaluationId },
        },
        {
          onEpoch: (record) => log.debug({ record }, 'epoch'),
          onCheckpoint: (bytes, epoch, final) => {
            if (bytes.length > policy!.maxBytes) {
              log.warn({ epoch, bytes: bytes.length, maxBytes: policy!.maxBytes }, "checkpoint larger than the run's checkpointMaxMb; not uploaded (this training cannot resume)");
              return;
            }
            // One upload at a time, in epoch order; training goes on meanwhile.
            uploads = uploads.then(async () => {
              const refused = await this.checkpoints.upload(bytes, { evaluationId: payload.evaluationId, epoch });
              if (refused) log.warn({ epoch, final, reason: refused }, 'checkpoint not stored; a later attempt cannot resume from it');
            });
          },
        },
      );
      await uploads; // the final checkpoint is stored before the result that may point to it
      if (outcome.start && outcome.start.kind !== 'fresh') log.info({ start: outcome.start.kind, fromEpoch: outcome.start.fromEpoch, copiedWeights: outcome.start.copiedWeights }, 'training continued from a checkpoint');
      else if (outcome.start?.note) log.warn({ note: outcome.start.note }, 'checkpoint not usable; trained from epoch 0');
      const reported = this.options.testOnlyInflateAccuracy === null ? outcome : inflateOutcome(outcome, this.options.testOnlyInflateAccuracy);
      const result: EvaluationResult = { schemaVersion: EVALUATION_RESULT_VERSION, evaluationId: payload.evaluationId, workerId: this.options.workerId, ...reported };
      evaluationResultValidator.parse(result);
      this.done++;
      this.lastSamplesPerSecond = result.samplesPerSecond;
      log.info({ valAccuracy: result.valAccuracy, seconds: Number(result.trainSeconds.toFixed(2)), samplesPerSecond: Math.round(result.samplesPerSecond) }, 'evaluation done');
      return result;
    } catch (err) {
      this.failed++;
      const message = (err as Error).message;
      log.warn({ err: message }, 'evaluation failed');
      if (!isRetryable(err)) throw new UnrecoverableError(`${DO_NOT_RETRY_PREFIX}${message}`);
      throw err;
    } finally {
      this.current = null;
      if (this.state === 'training') this.state = 'idle';
      this.heartbeat.notifyChange();
    }
  }

  /**
   * The checkpoint a job starts from: for a search job, the latest of an earlier attempt of the
   * same evaluation (asked of the coordinator, which also knows checkpoints uploaded after the job
   * was queued, or given in the reissued job), else the weights the job inherits; a champion job
   * (which uploads no checkpoints) only the weights it inherits (a warm start). Downloaded and
   * verified here; one that fails comes with a note, and the training starts from epoch 0.
   * The coordinator is asked only when an earlier run of this job or attempt may have uploaded
   * one (`takenOver`, or a later attempt), so a job's first start costs no request.
   */
  private async startCheckpoint(job: EvaluationJob, takenOver: boolean): Promise<StartCheckpoint | undefined> {
    const mayHaveOne = job.kind === 'search' && (takenOver || job.attempt > 1);
    const known = job.checkpoints && mayHaveOne ? await this.checkpoints.latest(job.evaluationId) : null;
    const resume = [known, job.kind === 'search' ? job.resume : undefined].filter((r) => r != null).sort((a, b) => b.epoch - a.epoch)[0];
    const offer = resume ? { kind: 'resumed' as const, ref: resume } : job.inherit ? { kind: job.inherit.kind, ref: job.inherit.checkpoint } : null;
    if (!offer) return undefined;
    const got = await this.checkpoints.fetch(offer.ref);
    return { kind: offer.kind, bytes: got.bytes, sha256: offer.ref.sha256, epoch: offer.ref.epoch, fromEvaluationId: offer.ref.evaluationId, note: got.note };
  }

  /**
   * Gives a job this worker must not run (a verification of its own result) back to the queue
   * untouched: BullMQ's way for a processor to put an active job back is `moveToWait` +
   * `WaitingError`, which costs no attempt. The job is at once waiting (with its priority) for any
   * other worker, while this one pauses 2 to 3 s (jittered) before it takes a job again. The
   * pause matters: a job put off with a delay instead came back just as its excluded, idle worker
   * was ready again, which grabbed it first every time while the others were busy (measured: a
   * verification then waited out its whole timeout).
   */
  private async handBack(job: Job, token: string | undefined): Promise<never> {
    const pauseMs = 2000 + Math.floor(Math.random() * 1000);
    this.log.debug({ jobId: job.id, pauseMs }, 'job excludes this worker; handed back to the queue');
    await job.moveToWait(token);
    await new Promise((resolve) => setTimeout(resolve, pauseMs));
    throw new WaitingError();
  }

  /**
   * Stops taking jobs and exits cleanly: the current job is finished first (BullMQ's close waits
   * for it); with `force` the training is killed and the job is left to the stalled check, which
   * hands it to another worker.
   */
  stop(opts: { force?: boolean } = {}): Promise<void> {
    if (opts.force) {
      if (this.current) this.log.warn('forced stop: abandoning the current job; another worker will take it over');
      this.training.kill();
    }
    if (this.stopping) return this.stopping;
    this.stopping = (async () => {
      if (this.stopTimer) clearTimeout(this.stopTimer);
      if (this.idleTimer) clearInterval(this.idleTimer);
      this.state = 'draining';
      void this.heartbeat.send();
      this.log.info({ currentEvaluationId: this.current }, 'draining: finishing the current job, taking no new ones');
      await this.worker?.close(opts.force);
      await this.training.close();
      this.state = 'stopped';
      await this.heartbeat.send();
      await this.heartbeat.stop();
      this.connection?.disconnect();
      this.log.info({ done: this.done, failed: this.failed }, 'worker stopped');
      this.markStopped();
    })();
    return this.stopping;
  }
}
