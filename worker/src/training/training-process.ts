import { fork, type ChildProcess } from 'node:child_process';
import type { Logger } from 'pino';
import type { BackendName, EpochRecord } from '@netbreeder/shared-types';
import type { BackendChoice } from './backend.js';
import { nodeEntry } from '../node-entry.js';
import { RemoteTrainingError, TrainingAbortedError, TrainingProcessError } from './errors.js';
import type { ChildMessage, ChildTrainRequest, ParentMessage } from './training-protocol.js';
import type { TrainOutcome } from './train-genome.js';

/** Options of {@link TrainingProcess}. */
export interface TrainingProcessOptions {
  /** Default memory cap of every job (a job's own `memoryCapMb` wins). No cap when absent. */
  memoryCapMb?: number;
  /** Backends the child tries, in order. @default ['tensorflow', 'wasm', 'cpu'] */
  prefer?: BackendName[];
  /** Structured logger; silent when absent. */
  log?: Logger;
  /**
   * Extra seconds a job may run past its own `maxSeconds` budget before the child is presumed
   * hung and killed (the job then fails as retryable). @default 120
   */
  graceSeconds?: number;
}

/** Per-job callbacks of {@link TrainingProcess.train}. */
export interface TrainCallOptions {
  /** Called with every epoch's record as the child reports it. */
  onEpoch?: (record: EpochRecord) => void;
  /** Called with every checkpoint the child takes (the job's `checkpoints` setting says when). */
  onCheckpoint?: (bytes: Uint8Array, epoch: number, final: boolean) => void;
  /** Aborting kills the child (training cannot be interrupted otherwise) and rejects with {@link TrainingAbortedError}. */
  signal?: AbortSignal;
}

interface PendingJob {
  id: number;
  resolve: (outcome: TrainOutcome) => void;
  reject: (err: Error) => void;
  onEpoch?: (record: EpochRecord) => void;
  onCheckpoint?: TrainCallOptions['onCheckpoint'];
}

/**
 * The worker's training child process: training never runs on the worker's event loop, so lock
 * renewal and heartbeats keep their timing. The child initialises its backend once and is kept
 * across jobs; if it dies, the job it was running fails with a retryable
 * {@link TrainingProcessError} and the next job forks a fresh child.
 */
export class TrainingProcess {
  private child: ChildProcess | null = null;
  private ready: Promise<BackendChoice> | null = null;
  private choice: BackendChoice | null = null;
  private pending: PendingJob | null = null;
  private queue: Promise<unknown> = Promise.resolve();
  private nextId = 1;
  private closed = false;

  constructor(private readonly options: TrainingProcessOptions = {}) {}

  /** Forks the child (if none runs) and initialises its backend; resolves with the backend choice. */
  start(): Promise<BackendChoice> {
    if (this.closed) return Promise.reject(new TrainingProcessError('the training process was closed; create a new one'));
    if (this.ready) return this.ready;
    // Compiled JavaScript beside this file, or its source through tsx (whether the parent runs under tsx or vitest).
    const entry = nodeEntry(import.meta.url, './training-child');
    const child = fork(entry.path, [], {
      execArgv: entry.execArgv,
      stdio: ['ignore', 'inherit', 'inherit', 'ipc'],
      serialization: 'advanced',
      // One worker uses one core: the native backend, where it installs, would otherwise start a
      // thread pool the size of the machine (the wasm backend is single-threaded in Node anyway).
      env: { ...process.env, TF_NUM_INTRAOP_THREADS: '1', TF_NUM_INTEROP_THREADS: '1' },
    });
    this.child = child;
    this.ready = new Promise<BackendChoice>((resolve, reject) => {
      const onMessage = (message: ChildMessage) => {
        if (message.type === 'ready') {
          this.choice = { backend: message.backend, reason: message.reason };
          this.options.log?.debug({ pid: child.pid, backend: message.backend, reason: message.reason }, 'training child ready');
          resolve(this.choice);
        } else if (message.type === 'init-failed') {
          reject(new TrainingProcessError(`the training child could not initialise a backend: ${message.message}`));
        } else {
          this.onJobMessage(message);
        }
      };
      child.on('message', onMessage);
      child.once('error', (err) => reject(new TrainingProcessError(`could not start the training child: ${err.message}`)));
      child.once('exit', (code, signal) => {
        reject(new TrainingProcessError(`the training child exited (${signal ?? `code ${code}`}) before it was ready`));
        this.onExit(child, code, signal);
      });
    });
    this.ready.catch(() => {});
    this.post({ type: 'init', prefer: this.options.prefer });
    return this.ready;
  }

  /** The backend the child trains on, once started. */
  backend(): BackendName | null {
    return this.choice?.backend ?? null;
  }

  /** Process id of the training child while it runs (for CPU accounting in benchmarks), else null. */
  pid(): number | null {
    return this.child?.pid ?? null;
  }

  /** Why the child chose that backend (what was tried and passed over). */
  backendReason(): string {
    return this.choice?.reason ?? 'not started';
  }

  /** Trains one job in the child; jobs submitted together run one after another. */
  train(request: ChildTrainRequest, call: TrainCallOptions = {}): Promise<TrainOutcome> {
    const run = this.queue.then(() => this.runJob(request, call));
    this.queue = run.catch(() => {});
    return run;
  }

  /** Kills the child at once; a running job fails (retryable) and the next job starts a new child. */
  kill(): void {
    this.child?.kill('SIGKILL');
  }

  /** Lets the current job finish, then stops the child. */
  async close(): Promise<void> {
    this.closed = true;
    await this.queue;
    const child = this.child;
    if (!child || child.exitCode !== null || child.signalCode !== null) return;
    const exited = new Promise<void>((resolve) => child.once('exit', () => resolve()));
    this.post({ type: 'shutdown' });
    const timer = setTimeout(() => child.kill('SIGKILL'), 5000);
    await exited;
    clearTimeout(timer);
  }

  private async runJob(request: ChildTrainRequest, call: TrainCallOptions): Promise<TrainOutcome> {
    if (call.signal?.aborted) throw new TrainingAbortedError();
    await this.start();
    const id = this.nextId++;
    const full: ChildTrainRequest = { ...request, memoryCapMb: request.memoryCapMb ?? this.options.memoryCapMb };
    return new Promise<TrainOutcome>((resolve, reject) => {
      const graceMs = (this.options.graceSeconds ?? 120) * 1000;
      const watchdog = setTimeout(() => {
        this.options.log?.warn({ jobId: id }, 'training child exceeded its time budget; killing it');
        this.kill();
      }, request.budget.maxSeconds * 1000 + graceMs);
      let aborted = false;
      const onAbort = () => {
        aborted = true;
        this.kill();
      };
      call.signal?.addEventListener('abort', onAbort, { once: true });
      const settle = () => {
        clearTimeout(watchdog);
        call.signal?.removeEventListener('abort', onAbort);
        this.pending = null;
      };
      this.pending = {
        id,
        onEpoch: call.onEpoch,
        onCheckpoint: call.onCheckpoint,
        resolve: (outcome) => {
          settle();
          resolve(outcome);
        },
        reject: (err) => {
          settle();
          reject(aborted ? new TrainingAbortedError() : err);
        },
      };
      this.post({ type: 'train', id, request: full });
    });
  }

  private onJobMessage(message: Exclude<ChildMessage, { type: 'ready' } | { type: 'init-failed' }>): void {
    const job = this.pending;
    if (!job || job.id !== message.id) return;
    if (message.type === 'epoch') {
      try {
        job.onEpoch?.(message.record);
      } catch (err) {
        this.options.log?.warn({ err: (err as Error).message }, 'onEpoch callback threw; ignored');
      }
    } else if (message.type === 'checkpoint') {
      try {
        job.onCheckpoint?.(message.bytes, message.epoch, message.final);
      } catch (err) {
        this.options.log?.warn({ err: (err as Error).message }, 'onCheckpoint callback threw; ignored');
      }
    } else if (message.type === 'done') {
      job.resolve(message.outcome);
    } else {
      job.reject(new RemoteTrainingError(message.message, message.code));
    }
  }

  private onExit(child: ChildProcess, code: number | null, signal: NodeJS.Signals | null): void {
    if (this.child !== child) return;
    this.child = null;
    this.ready = null;
    const how = signal ?? `code ${code}`;
    if (this.pending) {
      this.options.log?.warn({ exit: how }, 'training child died mid-job');
      this.pending.reject(new TrainingProcessError(`the training child exited (${how}) during the job; retry it`));
    } else if (!this.closed) {
      this.options.log?.info({ exit: how }, 'training child exited; the next job starts a new one');
    }
  }

  private post(message: ParentMessage): void {
    if (this.child?.connected) this.child.send(message);
  }
}
