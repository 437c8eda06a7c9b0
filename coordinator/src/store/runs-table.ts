import type { EvaluationJob, RunConfig, RunState } from '@netbreeder/shared-types';
import { json } from './row.js';
import { RUN_COLUMNS, runFromRow } from './row-mappers.js';
import type { RunRecord, StoredDataset } from './records.js';
import { withMemberGenomes, withoutMemberGenomes } from './snapshot-genomes.js';
import type { StoreDatabase } from './store-database.js';

/** Runs (`runs`) and their search algorithm's saved state (`search_snapshots`). */
export class RunsTable {
  constructor(private readonly db: StoreDatabase) {}

  create(run: { id: string; name: string; config: RunConfig; seed: number; dataset: StoredDataset; now: number }): void {
    this.db.run(
      `INSERT INTO runs (id, name, config_json, state, seed, dataset_json, created_at, search_started_at)
       VALUES (?, ?, ?, 'searching', ?, ?, ?, ?)`,
      run.id, run.name, JSON.stringify(run.config), run.seed, JSON.stringify(run.dataset), run.now, run.now,
    );
  }

  get(id: string): RunRecord | null {
    const row = this.db.get(`SELECT ${RUN_COLUMNS} FROM runs WHERE id = ?`, id);
    return row ? runFromRow(row) : null;
  }

  list(): RunRecord[] {
    return this.db.all(`SELECT ${RUN_COLUMNS} FROM runs ORDER BY created_at DESC`).map(runFromRow);
  }

  /** The newest run that has not ended, to resume after a restart. */
  unfinished(): RunRecord | null {
    const row = this.db.get(`SELECT ${RUN_COLUMNS} FROM runs WHERE state IN ('preparing', 'searching', 'paused', 'training-champion') ORDER BY created_at DESC LIMIT 1`);
    return row ? runFromRow(row) : null;
  }

  /** Moves a run to `state`; a state that ends the run sets its end time. */
  setState(id: string, state: RunState, opts: { now?: number; failure?: string } = {}): void {
    const ended = state === 'finished' || state === 'failed' || state === 'stopped';
    this.db.run(
      'UPDATE runs SET state = ?, finished_at = CASE WHEN ? THEN ? ELSE finished_at END, failure = COALESCE(?, failure) WHERE id = ?',
      state, ended ? 1 : 0, opts.now ?? Date.now(), opts.failure ?? null, id,
    );
  }

  /** One more proposal of the run counted. */
  countProposal(id: string): void {
    this.db.run('UPDATE runs SET proposals = proposals + 1 WHERE id = ?', id);
  }

  /** The search algorithm's last saved state (parsed JSON), or null before the first proposal. */
  searchSnapshot(runId: string): unknown {
    const row = this.db.get('SELECT snapshot_json FROM search_snapshots WHERE run_id = ?', runId);
    if (!row) return null;
    return withMemberGenomes(json<unknown>(row, 'snapshot_json'), (id) => {
      const r = this.db.get('SELECT job_json FROM evaluations WHERE id = ?', id);
      return r ? json<EvaluationJob>(r, 'job_json').genome : undefined;
    });
  }

  /** Saves the search algorithm's state; its members' genomes are stored once, in their evaluations (./snapshot-genomes.ts). */
  saveSearchSnapshot(runId: string, snapshot: unknown): void {
    this.db.run(
      'INSERT INTO search_snapshots (run_id, snapshot_json) VALUES (?, ?) ON CONFLICT(run_id) DO UPDATE SET snapshot_json = excluded.snapshot_json',
      runId, JSON.stringify(withoutMemberGenomes(snapshot)),
    );
  }
}
