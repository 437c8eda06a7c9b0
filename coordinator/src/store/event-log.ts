import { eventFromRow } from './row-mappers.js';
import type { EventRecord } from './records.js';
import type { StoreDatabase } from './store-database.js';

/** The event log (`events`): what happened to a run (rejections, reissues, state changes), or to no run (a revoked worker). */
export class EventLog {
  constructor(private readonly db: StoreDatabase) {}

  /** Appends to the log of `runId` (`null`: of no run). */
  log(runId: string | null, kind: string, detail: unknown, now: number): void {
    this.db.run('INSERT INTO events (run_id, at, kind, detail_json) VALUES (?, ?, ?, ?)', runId, now, kind, JSON.stringify(detail));
  }

  /** How many events of `kind` name `evaluationId` (in their detail). */
  countNaming(runId: string | null, kind: string, evaluationId: string): number {
    return this.db.count("SELECT COUNT(*) AS n FROM events WHERE run_id IS ? AND kind = ? AND json_extract(detail_json, '$.evaluationId') = ?", runId, kind, evaluationId);
  }

  /** A run's events in the order they were logged (of one kind only, with `kind`). */
  list(runId: string | null, kind?: string): EventRecord[] {
    const rows = kind
      ? this.db.all('SELECT * FROM events WHERE run_id IS ? AND kind = ? ORDER BY id', runId, kind)
      : this.db.all('SELECT * FROM events WHERE run_id IS ? ORDER BY id', runId);
    return rows.map(eventFromRow);
  }

  /** How many events of `kind` the store holds: of one run (`null`: those of no run), or of all when `runId` is omitted. */
  count(kind: string, runId?: string | null): number {
    return runId === undefined
      ? this.db.count('SELECT COUNT(*) AS n FROM events WHERE kind = ?', kind)
      : this.db.count('SELECT COUNT(*) AS n FROM events WHERE run_id IS ? AND kind = ?', runId, kind);
  }
}
