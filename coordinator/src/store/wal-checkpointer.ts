import { createRequire } from 'node:module';
import { Worker } from 'node:worker_threads';

/**
 * The thread's code (plain CommonJS: it runs without the TypeScript loader). Its own connection to
 * the store copies the write-ahead log into the database file every `intervalMs` with a PASSIVE
 * checkpoint, which never waits for and never blocks the coordinator's connection.
 */
const THREAD_CODE = `
const { parentPort, workerData } = require('node:worker_threads');
const Database = require(workerData.driver);
const db = new Database(workerData.path, { fileMustExist: true });
const timer = setInterval(() => {
  try {
    const [row] = db.pragma('wal_checkpoint(PASSIVE)');
    parentPort.postMessage({ type: 'checkpointed', ...row });
  } catch (err) {
    parentPort.postMessage({ type: 'failed', message: err.message });
  }
}, workerData.intervalMs);
parentPort.on('message', () => {
  clearInterval(timer);
  db.close();
  parentPort.close();
});
`;

/** What one checkpoint saw: the log's frames and how many of them are in the database file now. */
export interface CheckpointReport {
  busy: number;
  log: number;
  checkpointed: number;
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
 * Checkpoints a SQLite store in WAL mode on a thread of its own. SQLite's automatic checkpoint runs
 * inside the commit that crosses its threshold, on the connection's thread, and syncs the database
 * file there: in the coordinator that held up its event loop (and so every job, heartbeat and
 * `/status`) for a copy and an fsync every few hundred results. With this, the coordinator's
 * connection turns its automatic checkpoint off.
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
      if (m.type === 'failed') fail(new Error(`background WAL checkpoint failed: ${m.message}`));
      else options.onCheckpoint?.({ busy: m.busy, log: m.log, checkpointed: m.checkpointed });
    });
    thread.on('error', (err) => fail(new Error(`background WAL checkpoint thread failed: ${err.message}`)));
    thread.on('exit', (code) => fail(new Error(`background WAL checkpoint thread exited (code ${code})`)));
    return checkpointer;
  }

  /** Asks the thread to close its connection and end; returns at once. */
  stop(): void {
    if (this.stopped) return;
    this.stopped = true;
    if (!this.failed) this.thread.postMessage('stop');
  }
}
