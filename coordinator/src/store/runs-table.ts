import { NetbreederError, type EvaluationJob, type RunConfig, type RunState } from '@netbreeder/shared-types';
import { INITIAL_RUN_STATE, OPEN_RUN_STATES, RUN_STATES, assertTransition, isRunEnded, sqlStateList } from './run-lifecycle.js';
import { json, oneOf } from './row.js';
import { RUN_COLUMNS, runFromRow } from './row-mappers.js';
import type { RunRecord, StoredDataset } from './records.js';
import { withMemberGenomes, withoutMemberGenomes } from './snapshot-genomes.js';
import type { StoreDatabase } from './store-database.js';

/** The lifecycle's open states as SQL (./run-lifecycle.ts). */
const OPEN_STATES = sqlStateList(OPEN_RUN_STATES);

/** Runs (`runs`) and their search algorithm's saved state (`search_snapshots`). */
export class RunsTable {
  constructor(private readonly db: StoreDatabase) {}

  /** Records a new run, in the lifecycle's first state. */
  create(run: { id: string; name: string; config: RunConfig; seed: number; dataset: StoredDataset; now: number }): void {
    this.db.run(
      `INSERT INTO runs (id, name, config_json, state, seed, dataset_json, created_at, search_started_at)
       VALUES (?, ?, ?, ?, ?, ?, ?, ?)`,
      run.id, run.name, JSON.stringify(run.config), INITIAL_RUN_STATE, run.seed, JSON.stringify(run.dataset), run.now, run.now,
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
    const row = this.db.get(`SELECT ${RUN_COLUMNS} FROM runs WHERE state IN (${OPEN_STATES}) ORDER BY created_at DESC LIMIT 1`);
    return row ? runFromRow(row) : null;
  }

  /**
   * Moves a run to `state` when its lifecycle (./run-lifecycle.ts) allows that from the state
   * it is in; else throws `IllegalRunTransitionError` and changes nothing. A state that ends the
   * run sets its end time.
   */
  setState(id: string, state: RunState, opts: { now?: number; failure?: string } = {}): void {
    const row = this.db.get('SELECT state FROM runs WHERE id = ?', id);
    if (!row) throw new NetbreederError('NB_NO_RUN', `no run ${id} in the store, so its state cannot be set; check the run id`);
    assertTransition(id, oneOf(row, 'state', RUN_STATES), state);
    this.db.run(
      'UPDATE runs SET state = ?, finished_at = CASE WHEN ? THEN ? ELSE finished_at END, failure = COALESCE(?, failure) WHERE id = ?',
      state, isRunEnded(state) ? 1 : 0, opts.now ?? Date.now(), opts.failure ?? null, id,
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
