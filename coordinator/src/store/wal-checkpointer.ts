import { createRequire } from 'node:module';
import { Worker } from 'node:worker_threads';
import { NetbreederError } from '@netbreeder/shared-types';

/**
 * The thread's code (plain CommonJS: it runs without the TypeScript loader), every `intervalMs`,
 * on a connection of its own:
 * 1. a PASSIVE checkpoint copies the log's frames into the database file without taking any lock
 *    the coordinator's connection waits on;
 * 2. the database file is synced, still without a lock;
 * 3. a RESTART checkpoint copies the few frames committed meanwhile, syncs again (little is left
 *    to write) and has the next commit start the log from its beginning. Only this step keeps the
 *    coordinator's commits waiting, for about as long as those few frames take.
 * Without step 3 the log never restarts while commits keep coming, and grows without bound.
 */
const THREAD_CODE = `
const { parentPort, workerData } = require('node:worker_threads');
const { openSync, fdatasyncSync, closeSync } = require('node:fs');
const Database = require(workerData.driver);
const db = new Database(workerData.path, { fileMustExist: true });
db.pragma('busy_timeout = 1000');
const fd = openSync(workerData.path, 'r+');
const timer = setInterval(() => {
  try {
    db.pragma('wal_checkpoint(PASSIVE)');
    fdatasyncSync(fd);
    const started = performance.now();
    const [row] = db.pragma('wal_checkpoint(RESTART)');
    parentPort.postMessage({ type: 'checkpointed', ...row, restartMs: performance.now() - started });
  } catch (err) {
    // Busy past the timeout (a long transaction): the next round tries again.
    if (err.code !== 'SQLITE_BUSY') parentPort.postMessage({ type: 'failed', message: err.message });
  }
}, workerData.intervalMs);
parentPort.on('message', () => {
  clearInterval(timer);
  closeSync(fd);
  db.close();
  parentPort.close();
});
`;

/** What one checkpoint saw: the log's frames and how many of them are in the database file now. */
export interface CheckpointReport {
  busy: number;
  log: number;
  checkpointed: number;
  /** How long the RESTART step took: about how long it kept the store's commits waiting. */
  restartMs: number;
}

export interface WalCheckpointerOptions {
  /** @default 500 */
  intervalMs?: number;
  /** Told of each checkpoint (tests, diagnostics). */
  onCheckpoint?: (report: CheckpointReport) => void;
  /**
   * Told once when the thread fails or exits on its own; the caller must then checkpoint on its own
   * connection again (`wal_autocheckpoint`), or the log would grow without bound.
   */
  onFailure: (err: Error) => void;
}

/**
 * Checkpoints a SQLite store in WAL mode on a thread of its own (see {@link THREAD_CODE}). SQLite's
 * automatic checkpoint runs inside the commit that crosses its threshold, on the connection's
 * thread, and syncs the database file there: in the coordinator that held up its event loop (and
 * so every job, heartbeat and `/status`) for a copy and an fsync every few hundred results. With
 * this, the coordinator's connection turns its automatic checkpoint off.
 */
export class WalCheckpointer {
  private failed = false;
  private stopped = false;

  private constructor(private readonly thread: Worker) {}

  static start(path: string, options: WalCheckpointerOptions): WalCheckpointer {
    const driver = createRequire(import.meta.url).resolve('better-sqlite3');
    const thread = new Worker(THREAD_CODE, { eval: true, workerData: { path, driver, intervalMs: options.intervalMs ?? 500 } });
    thread.unref();
    const checkpointer = new WalCheckpointer(thread);
    const fail = (err: Error) => {
      if (checkpointer.failed || checkpointer.stopped) return;
      checkpointer.failed = true;
      void thread.terminate();
      options.onFailure(err);
    };
    thread.on('message', (m: { type: 'checkpointed' } & CheckpointReport | { type: 'failed'; message: string }) => {
      if (m.type === 'failed') fail(new NetbreederError('NB_STORE_CHECKPOINT_FAILED', `background WAL checkpoint failed: ${m.message}`));
      else options.onCheckpoint?.({ busy: m.busy, log: m.log, checkpointed: m.checkpointed, restartMs: m.restartMs });
    });
    thread.on('error', (err) => fail(new NetbreederError('NB_STORE_CHECKPOINT_FAILED', `background WAL checkpoint thread failed: ${err.message}`)));
    thread.on('exit', (code) => fail(new NetbreederError('NB_STORE_CHECKPOINT_FAILED', `background WAL checkpoint thread exited (code ${code})`)));
    return checkpointer;
  }

  /** Asks the thread to close its connection and end; returns at once. */
  stop(): void {
    if (this.stopped) return;
    this.stopped = true;
    if (!this.failed) this.thread.postMessage('stop');
  }
}
