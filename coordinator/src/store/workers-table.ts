import type { WorkerHeartbeat } from '@netbreeder/shared-types';
import type { EvaluationsTable } from './evaluations-table.js';
import type { WorkerSeen } from './records.js';
import { workerFromRow } from './row-mappers.js';
import type { StoreDatabase } from './store-database.js';

/** A worker seen since the bound parameter whose last heartbeat did not say it stopped. */
const LIVE_WORKER = 'last_seen_at >= ? AND stopped = 0';

/**
 * How long a taken heartbeat may wait to be written with the next ones (no read waits: the store
 * writes it before any other statement). A coordinator killed meanwhile loses it; its worker sends
 * the next within seconds.
 */
const HEARTBEAT_WRITE_DELAY_MS = 50;

/**
 * The workers the coordinator has heard from (`workers`, one row per worker with its last
 * heartbeat), and the batching of their heartbeats.
 */
export class WorkersTable {
  /** Heartbeats taken and not yet written (see {@link WorkersTable.takeHeartbeat}). */
  private heartbeats: Array<{ hb: WorkerHeartbeat; at: number }> = [];
  private heartbeatWrite: NodeJS.Timeout | null = null;

  constructor(
    private readonly db: StoreDatabase,
    private readonly evaluations: EvaluationsTable,
    /** Told when taken heartbeats could not be written; without it the error is thrown. */
    private readonly onWriteError?: (err: Error, heartbeats: number) => void,
  ) {
    db.holdWrites(() => {
      if (this.heartbeats.length) this.writeHeartbeats();
    });
  }

  upsert(hb: WorkerHeartbeat, now: number): void {
    this.db.run(
      `INSERT INTO workers (id, heartbeat_json, first_seen_at, last_seen_at, stopped) VALUES (?, ?, ?, ?, ?)
       ON CONFLICT(id) DO UPDATE SET heartbeat_json = excluded.heartbeat_json, last_seen_at = excluded.last_seen_at, stopped = excluded.stopped`,
      hb.workerId, JSON.stringify(hb), now, now, hb.state === 'stopped' ? 1 : 0,
    );
  }

  /**
   * Takes a worker's heartbeat: it is stored, and the worker's current evaluation marked running,
   * with every other heartbeat taken within {@link HEARTBEAT_WRITE_DELAY_MS} in one transaction,
   * or before any other statement of this store runs, whichever comes first; so every read sees
   * it. A thousand workers send hundreds of heartbeats a second, and a commit for each cost more
   * than the rest of their handling.
   */
  takeHeartbeat(hb: WorkerHeartbeat, now: number): void {
    this.heartbeats.push({ hb, at: now });
    this.heartbeatWrite ??= setTimeout(() => this.writeHeartbeats(), HEARTBEAT_WRITE_DELAY_MS);
  }

  private writeHeartbeats(): void {
    if (this.heartbeatWrite) clearTimeout(this.heartbeatWrite);
    this.heartbeatWrite = null;
    const batch = this.heartbeats;
    this.heartbeats = [];
    if (!batch.length) return;
    try {
      this.db.transaction(() => {
        for (const { hb, at } of batch) {
          this.upsert(hb, at);
          if (hb.currentEvaluationId) this.evaluations.markRunning(hb.currentEvaluationId, hb.workerId, at);
        }
      });
    } catch (err) {
      if (!this.onWriteError) throw err;
      this.onWriteError(err as Error, batch.length);
    }
  }

  /** Workers heard from since `since` (ms epoch) that have not said they stopped; no JSON parsed. */
  countLive(since: number): number {
    return this.db.count(`SELECT COUNT(*) AS n FROM workers WHERE ${LIVE_WORKER}`, since);
  }

  /** True when a worker `countLive` counts is none of `excluded` (one indexed query, at most one row read past them). */
  hasLiveOutside(since: number, excluded: readonly string[]): boolean {
    return this.db.get(`SELECT 1 FROM workers WHERE ${LIVE_WORKER} AND id NOT IN (SELECT value FROM json_each(?)) LIMIT 1`, since, JSON.stringify(excluded)) !== undefined;
  }

  list(): WorkerSeen[] {
    return this.db.all('SELECT * FROM workers ORDER BY first_seen_at').map(workerFromRow);
  }
}
