import Database from 'better-sqlite3';
import type { DatasetManifest, EvaluationJob, EvaluationResult, Genome, RunConfig, RunState, SearchDecision, SearchStep, WorkerHeartbeat } from '@netbreeder/shared-types';
import { withMemberGenomes, withoutMemberGenomes } from './snapshot-genomes.js';
import { MIGRATIONS } from './migrations.js';
import { WalCheckpointer, type WalCheckpointerOptions } from './wal-checkpointer.js';
import type { DatasetPreparation } from '../datasets/index.js';

/** Where a run's prepared data lives on the coordinator's disk. */
export interface StoredDataset {
  manifest: DatasetManifest;
  /** Shard file served to workers (train + validation). */
  shardPath: string;
  /** Held-out test split; never served. */
  testPath: string;
  /** How the inputs were encoded (fitted on the training split), class counts per split, warnings. Absent in runs stored before dataset import existed. */
  preparation?: DatasetPreparation;
}

export interface RunRecord {
  id: string;
  name: string;
  config: RunConfig;
  state: RunState;
  seed: number;
  dataset: StoredDataset;
  proposals: number;
  createdAt: number;
  searchStartedAt: number | null;
  finishedAt: number | null;
  failure: string | null;
}

export type EvaluationState = 'queued' | 'running' | 'done' | 'failed';

export interface EvaluationRecord {
  id: string;
  runId: string;
  kind: 'search' | 'champion';
  seq: number;
  attempt: number;
  genomeHash: string;
  job: EvaluationJob;
  state: EvaluationState;
  queuedAt: number;
  startedAt: number | null;
  finishedAt: number | null;
  workerId: string | null;
  valAccuracy: number | null;
  result: EvaluationResult | null;
  error: string | null;
}

export interface GenomeRecord {
  hash: string;
  genome: Genome;
  params: number;
  flops: number;
  summary: string;
}

export interface LineageLink {
  evaluationId: string;
  childHash: string;
  parentHash: string;
  operator: string;
  detail: string;
}

export interface ChampionRecord {
  runId: string;
  evaluationId: string;
  sourceEvaluationId: string;
  genomeHash: string;
  valAccuracy: number;
  testAccuracy: number;
  testLoss: number;
  testPredictions: number[];
  result: EvaluationResult;
  createdAt: number;
}

/** The latest checkpoint of one evaluation sequence (run, seq), as the store keeps it. */
export interface CheckpointRecord {
  runId: string;
  seq: number;
  /** The attempt that uploaded it. */
  evaluationId: string;
  genomeHash: string;
  sha256: string;
  epoch: number;
  final: boolean;
  bytes: number;
  path: string;
  createdAt: number;
}

const checkpointFromRow = (r: Row): CheckpointRecord => ({
  runId: r.run_id as string,
  seq: r.seq as number,
  evaluationId: r.evaluation_id as string,
  genomeHash: r.genome_hash as string,
  sha256: r.sha256 as string,
  epoch: r.epoch as number,
  final: r.final === 1,
  bytes: r.bytes as number,
  path: r.path as string,
  createdAt: r.created_at as number,
});

/** One retrained member of a run's averaging ensemble. */
export interface EnsembleMemberRecord {
  runId: string;
  /** 0-based place in the ensemble (the order the members were chosen). */
  position: number;
  /** Its final training (a champion-kind evaluation). */
  evaluationId: string;
  /** The search evaluation that earned it its place. */
  sourceEvaluationId: string;
  genomeHash: string;
  /** Its own score on the held-out test split. */
  testAccuracy: number;
}

/** Outcome of offering a result to the store: only `recorded` changed anything. */
export type RecordOutcome = 'recorded' | 'duplicate' | 'unknown-evaluation';

type Row = Record<string, unknown>;

const evaluationFromRow = (r: Row): EvaluationRecord => ({
  id: r.id as string,
  runId: r.run_id as string,
  kind: r.kind as 'search' | 'champion',
  seq: r.seq as number,
  attempt: r.attempt as number,
  genomeHash: r.genome_hash as string,
  job: JSON.parse(r.job_json as string) as EvaluationJob,
  state: r.state as EvaluationState,
  queuedAt: r.queued_at as number,
  startedAt: (r.started_at as number | null) ?? null,
  finishedAt: (r.finished_at as number | null) ?? null,
  workerId: (r.worker_id as string | null) ?? null,
  valAccuracy: (r.val_accuracy as number | null) ?? null,
  result: r.result_json ? (JSON.parse(r.result_json as string) as EvaluationResult) : null,
  error: (r.error as string | null) ?? null,
});

/** A worker seen since the bound parameter whose last heartbeat did not say it stopped. */
const LIVE_WORKER = 'last_seen_at >= ? AND stopped = 0';

/**
 * How long a taken heartbeat may wait to be written with the next ones (no read waits: the store
 * writes it before any other statement). A coordinator killed meanwhile loses it; its worker sends
 * the next within seconds.
 */
const HEARTBEAT_WRITE_DELAY_MS = 50;

/** SQLite's own `wal_autocheckpoint`, in pages. */
const SQLITE_DEFAULT_AUTOCHECKPOINT = 1000;

/** Every column of `runs` (the search snapshot is in its own table since migration 7). */
const RUN_COLUMNS = 'id, name, config_json, state, seed, dataset_json, proposals, created_at, search_started_at, finished_at, failure';

const runFromRow = (r: Row): RunRecord => ({
  id: r.id as string,
  name: r.name as string,
  config: JSON.parse(r.config_json as string) as RunConfig,
  state: r.state as RunState,
  seed: r.seed as number,
  dataset: JSON.parse(r.dataset_json as string) as StoredDataset,
  proposals: r.proposals as number,
  createdAt: r.created_at as number,
  searchStartedAt: (r.search_started_at as number | null) ?? null,
  finishedAt: (r.finished_at as number | null) ?? null,
  failure: (r.failure as string | null) ?? null,
});

export interface RunStoreOptions {
  /**
   * Told when heartbeats taken with {@link RunStore.takeHeartbeat} could not be written (soft
   * state: each worker sends its next one within seconds). @default the error is thrown
   */
  onHeartbeatWriteError?: (err: Error, heartbeats: number) => void;
  /**
   * Checkpoint the write-ahead log on a thread of its own ({@link WalCheckpointer}) instead of
   * inside the commits on this one. Should that thread fail, this connection checkpoints again as
   * SQLite does by default, and `onFailure` is told. Only for a store in a file.
   */
  backgroundCheckpoints?: Omit<WalCheckpointerOptions, 'onFailure'> & { onFailure?: (err: Error) => void };
}

/**
 * The coordinator's store: one SQLite file (better-sqlite3, synchronous, WAL). Every write that
 * must be atomic with another goes through {@link RunStore.transaction}. Results are recorded by
 * evaluation id with a state guard, so a result delivered twice is counted once.
 */
export class RunStore {
  private readonly db: Database.Database;
  /** Prepared statements by SQL text: preparing costs more than running a small statement. */
  private readonly statements = new Map<string, Database.Statement>();
  /** Heartbeats taken and not yet written (see {@link RunStore.takeHeartbeat}). */
  private heartbeats: Array<{ hb: WorkerHeartbeat; at: number }> = [];
  private heartbeatWrite: NodeJS.Timeout | null = null;
  private checkpointer: WalCheckpointer | null = null;

  constructor(
    path: string,
    private readonly options: RunStoreOptions = {},
  ) {
    this.db = new Database(path);
    this.db.pragma('journal_mode = WAL');
    this.db.pragma('synchronous = NORMAL');
    this.db.pragma('foreign_keys = ON');
    this.db.pragma('busy_timeout = 5000');
    // 64 MiB of page cache (the default is 2 MiB): a store of a million results keeps its indexes' upper levels in memory.
    this.db.pragma('cache_size = -65536');
    this.migrate();
    const background = options.backgroundCheckpoints;
    if (background && path !== ':memory:') {
      this.db.pragma('wal_autocheckpoint = 0');
      // The log file shrinks back to 64 MiB when it restarts after a burst (a bulk import).
      this.db.pragma('journal_size_limit = 67108864');
      this.checkpointer = WalCheckpointer.start(path, {
        ...background,
        onFailure: (err) => {
          this.checkpointer = null;
          if (this.db.open) this.db.pragma(`wal_autocheckpoint = ${SQLITE_DEFAULT_AUTOCHECKPOINT}`);
          background.onFailure?.(err);
        },
      });
    }
  }

  private migrate(): void {
    const version = this.db.pragma('user_version', { simple: true }) as number;
    for (let i = version; i < MIGRATIONS.length; i++) {
      this.db.transaction(() => {
        this.db.exec(MIGRATIONS[i]!);
        this.db.pragma(`user_version = ${i + 1}`);
      })();
    }
  }

  /** The prepared statement for `sql`, prepared once per store; heartbeats still waiting are written first. */
  private sql(sql: string): Database.Statement {
    if (this.heartbeats.length) this.writeHeartbeats();
    let statement = this.statements.get(sql);
    if (!statement) {
      statement = this.db.prepare(sql);
      this.statements.set(sql, statement);
    }
    return statement;
  }

  /** The cached prepared statement for `sql`, for the store's companion tables (./trust-store.ts) only. */
  statement(sql: string): Database.Statement {
    return this.sql(sql);
  }

  /**
   * Runs `fn` in one transaction: all of its writes land, or none (waiting heartbeats are written
   * before, on their own). It takes the write lock when it begins (BEGIN IMMEDIATE), waiting up to
   * the busy timeout for it: a deferred transaction that reads first and writes later fails at
   * once with "database is locked" when another connection (the checkpoint thread's RESTART)
   * writes in between, as SQLite cannot wait for the lock inside a read.
   */
  transaction<T>(fn: () => T): T {
    if (this.heartbeats.length) this.writeHeartbeats();
    return this.db.transaction(fn).immediate();
  }

  close(): void {
    if (this.heartbeats.length) this.writeHeartbeats();
    this.checkpointer?.stop();
    this.checkpointer = null;
    this.db.close();
  }

  // ---- runs ----------------------------------------------------------------------------------

  createRun(run: { id: string; name: string; config: RunConfig; seed: number; dataset: StoredDataset; now: number }): void {
    this
      .sql(
        `INSERT INTO runs (id, name, config_json, state, seed, dataset_json, created_at, search_started_at)
         VALUES (?, ?, ?, 'searching', ?, ?, ?, ?)`,
      )
      .run(run.id, run.name, JSON.stringify(run.config), run.seed, JSON.stringify(run.dataset), run.now, run.now);
  }

  getRun(id: string): RunRecord | null {
    const row = this.sql(`SELECT ${RUN_COLUMNS} FROM runs WHERE id = ?`).get(id) as Row | undefined;
    return row ? runFromRow(row) : null;
  }

  listRuns(): RunRecord[] {
    return (this.sql(`SELECT ${RUN_COLUMNS} FROM runs ORDER BY created_at DESC`).all() as Row[]).map(runFromRow);
  }

  /** The newest run that has not ended, to resume after a restart. */
  unfinishedRun(): RunRecord | null {
    const row = this
      .sql(`SELECT ${RUN_COLUMNS} FROM runs WHERE state IN ('preparing', 'searching', 'paused', 'training-champion') ORDER BY created_at DESC LIMIT 1`)
      .get() as Row | undefined;
    return row ? runFromRow(row) : null;
  }

  setRunState(id: string, state: RunState, opts: { now?: number; failure?: string } = {}): void {
    const ended = state === 'finished' || state === 'failed' || state === 'stopped';
    this
      .sql('UPDATE runs SET state = ?, finished_at = CASE WHEN ? THEN ? ELSE finished_at END, failure = COALESCE(?, failure) WHERE id = ?')
      .run(state, ended ? 1 : 0, opts.now ?? Date.now(), opts.failure ?? null, id);
  }

  /** The search algorithm's last saved state (parsed JSON), or null before the first proposal. */
  searchSnapshot(runId: string): unknown {
    const row = this.sql('SELECT snapshot_json FROM search_snapshots WHERE run_id = ?').get(runId) as Row | undefined;
    if (!row) return null;
    const jobOf = this.sql('SELECT job_json FROM evaluations WHERE id = ?');
    return withMemberGenomes(JSON.parse(row.snapshot_json as string), (id) => {
      const r = jobOf.get(id) as Row | undefined;
      return r ? (JSON.parse(r.job_json as string) as EvaluationJob).genome : undefined;
    });
  }

  /** Saves the search algorithm's state; its members' genomes are stored once, in their evaluations (./snapshot-genomes.ts). */
  saveSearchSnapshot(runId: string, snapshot: unknown): void {
    this
      .sql('INSERT INTO search_snapshots (run_id, snapshot_json) VALUES (?, ?) ON CONFLICT(run_id) DO UPDATE SET snapshot_json = excluded.snapshot_json')
      .run(runId, JSON.stringify(withoutMemberGenomes(snapshot)));
  }

  // ---- genomes and evaluations -----------------------------------------------------------------

  putGenome(g: GenomeRecord): void {
    this
      .sql('INSERT OR IGNORE INTO genomes (hash, genome_json, params, flops, summary) VALUES (?, ?, ?, ?, ?)')
      .run(g.hash, JSON.stringify(g.genome), g.params, g.flops, g.summary);
  }

  getGenome(hash: string): GenomeRecord | null {
    const r = this.sql('SELECT * FROM genomes WHERE hash = ?').get(hash) as Row | undefined;
    if (!r) return null;
    return { hash, genome: JSON.parse(r.genome_json as string) as Genome, params: r.params as number, flops: r.flops as number, summary: r.summary as string };
  }

  /** Inserts a queued evaluation; with `countsAsProposal` the run's proposal counter moves too. */
  addEvaluation(job: EvaluationJob, seq: number, now: number, countsAsProposal: boolean): void {
    this
      .sql(
        `INSERT INTO evaluations (id, run_id, kind, seq, attempt, genome_hash, seed, job_json, state, queued_at)
         VALUES (?, ?, ?, ?, ?, ?, ?, ?, 'queued', ?)`,
      )
      .run(job.evaluationId, job.runId, job.kind, seq, job.attempt, job.genomeHash, job.seed, JSON.stringify(job), now);
    if (countsAsProposal) this.sql('UPDATE runs SET proposals = proposals + 1 WHERE id = ?').run(job.runId);
  }

  addLineage(runId: string, link: LineageLink): void {
    this
      .sql('INSERT OR IGNORE INTO lineage (evaluation_id, run_id, child_hash, parent_hash, operator, detail) VALUES (?, ?, ?, ?, ?, ?)')
      .run(link.evaluationId, runId, link.childHash, link.parentHash, link.operator, link.detail);
  }

  getEvaluation(id: string): EvaluationRecord | null {
    const r = this.sql('SELECT * FROM evaluations WHERE id = ?').get(id) as Row | undefined;
    return r ? evaluationFromRow(r) : null;
  }

  /** Evaluations still owed a result (queued or running): what a rebuilt queue must hold. */
  pendingEvaluations(runId: string): EvaluationRecord[] {
    return (this.sql(`SELECT * FROM evaluations WHERE run_id = ? AND state IN ('queued', 'running') ORDER BY seq, attempt`).all(runId) as Row[]).map(
      evaluationFromRow,
    );
  }

  /** Marks a queued evaluation running on a worker (from its heartbeat); no effect otherwise. */
  markRunning(id: string, workerId: string, now: number): boolean {
    return this.sql(`UPDATE evaluations SET state = 'running', worker_id = ?, started_at = COALESCE(started_at, ?) WHERE id = ? AND state = 'queued'`).run(workerId, now, id).changes === 1;
  }

  /** Records a result once: a second delivery of the same evaluation changes nothing. */
  recordResult(id: string, result: EvaluationResult, now: number): RecordOutcome {
    const info = this
      .sql(
        `UPDATE evaluations SET state = 'done', finished_at = ?, worker_id = ?, backend = ?, val_accuracy = ?, val_loss = ?,
           train_seconds = ?, samples_per_second = ?, result_json = ?, started_at = COALESCE(started_at, ?)
         WHERE id = ? AND state IN ('queued', 'running')`,
      )
      .run(now, result.workerId, result.backend, result.valAccuracy, result.valLoss, result.trainSeconds, result.samplesPerSecond, JSON.stringify({ ...result, model: undefined }), now, id);
    if (info.changes === 1) return 'recorded';
    return this.getEvaluation(id) ? 'duplicate' : 'unknown-evaluation';
  }

  /** Records a failed attempt once. */
  recordFailure(id: string, error: string, now: number): RecordOutcome {
    const info = this.sql(`UPDATE evaluations SET state = 'failed', finished_at = ?, error = ? WHERE id = ? AND state IN ('queued', 'running')`).run(now, error.slice(0, 4000), id);
    if (info.changes === 1) return 'recorded';
    return this.getEvaluation(id) ? 'duplicate' : 'unknown-evaluation';
  }

  /** Counts of one kind of evaluation by state. */
  counts(runId: string, kind: 'search' | 'champion' = 'search'): Record<EvaluationState, number> {
    const out: Record<EvaluationState, number> = { queued: 0, running: 0, done: 0, failed: 0 };
    // Kept by triggers in the same transaction as every write (migration 2): no scan of the run's rows.
    for (const r of this.sql('SELECT state, n FROM evaluation_counts WHERE run_id = ? AND kind = ?').all(runId, kind) as Row[]) {
      out[r.state as EvaluationState] = r.n as number;
    }
    return out;
  }

  /** Search evaluations finished (done) since `since` (ms epoch); reads only the rows in that time range. */
  doneSince(runId: string, since: number): number {
    return (this.sql(`SELECT COUNT(*) AS n FROM evaluations INDEXED BY evaluations_by_run_finished WHERE run_id = ? AND finished_at >= ? AND kind = 'search' AND state = 'done'`).get(runId, since) as Row).n as number;
  }

  /**
   * The best finished search evaluations: highest validation accuracy, then fewest parameters.
   * Walks `evaluations_by_run_kind_state_score` from the top, so only the leading rows are read.
   */
  topEvaluations(runId: string, limit: number): Array<EvaluationRecord & { params: number; flops: number; summary: string; genome: Genome }> {
    const rows = this
      .sql(
        `SELECT e.*, g.params, g.flops, g.summary, g.genome_json FROM evaluations e INDEXED BY evaluations_by_run_kind_state_score
         JOIN genomes g ON g.hash = e.genome_hash
         WHERE e.run_id = ? AND e.kind = 'search' AND e.state = 'done'
         ORDER BY e.val_accuracy DESC, g.params ASC, e.seq ASC LIMIT ?`,
      )
      .all(runId, limit) as Row[];
    return rows.map((r) => ({
      ...evaluationFromRow(r),
      params: r.params as number,
      flops: r.flops as number,
      summary: r.summary as string,
      genome: JSON.parse(r.genome_json as string) as Genome,
    }));
  }

  /** Every evaluation of a run in proposal order (for reports and tests). */
  /** A run's evaluations (of one kind only, with `kind`: read through the index, not the whole run), by seq and attempt. */
  evaluations(runId: string, kind?: EvaluationRecord['kind']): EvaluationRecord[] {
    const rows = kind
      ? this.sql('SELECT * FROM evaluations WHERE run_id = ? AND kind = ? ORDER BY seq, attempt').all(runId, kind)
      : this.sql('SELECT * FROM evaluations WHERE run_id = ? ORDER BY seq, attempt').all(runId);
    return (rows as Row[]).map(evaluationFromRow);
  }

  /** The chain of mutations that led to `genomeHash`, from its earliest recorded ancestor. */
  lineageChain(runId: string, genomeHash: string, maxDepth = 1000): LineageLink[] {
    const chain: LineageLink[] = [];
    const stmt = this.sql('SELECT * FROM lineage WHERE run_id = ? AND child_hash = ? ORDER BY evaluation_id LIMIT 1');
    let hash = genomeHash;
    const seen = new Set<string>();
    while (chain.length < maxDepth && !seen.has(hash)) {
      seen.add(hash);
      const r = stmt.get(runId, hash) as Row | undefined;
      if (!r) break;
      chain.unshift({ evaluationId: r.evaluation_id as string, childHash: r.child_hash as string, parentHash: r.parent_hash as string, operator: r.operator as string, detail: r.detail as string });
      hash = r.parent_hash as string;
    }
    return chain;
  }

  // ---- workers -------------------------------------------------------------------------------

  upsertWorker(hb: WorkerHeartbeat, now: number): void {
    this
      .sql(
        `INSERT INTO workers (id, heartbeat_json, first_seen_at, last_seen_at, stopped) VALUES (?, ?, ?, ?, ?)
         ON CONFLICT(id) DO UPDATE SET heartbeat_json = excluded.heartbeat_json, last_seen_at = excluded.last_seen_at, stopped = excluded.stopped`,
      )
      .run(hb.workerId, JSON.stringify(hb), now, now, hb.state === 'stopped' ? 1 : 0);
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
          this.upsertWorker(hb, at);
          if (hb.currentEvaluationId) this.markRunning(hb.currentEvaluationId, hb.workerId, at);
        }
      }).immediate();
    } catch (err) {
      if (!this.options.onHeartbeatWriteError) throw err;
      this.options.onHeartbeatWriteError(err as Error, batch.length);
    }
  }

  /** Workers heard from since `since` (ms epoch) that have not said they stopped; no JSON parsed. */
  countLiveWorkers(since: number): number {
    return (this.sql(`SELECT COUNT(*) AS n FROM workers WHERE ${LIVE_WORKER}`).get(since) as Row).n as number;
  }

  /** True when a worker `countLiveWorkers` counts is none of `excluded` (one indexed query, at most one row read past them). */
  hasLiveWorkerOutside(since: number, excluded: readonly string[]): boolean {
    return this.sql(`SELECT 1 FROM workers WHERE ${LIVE_WORKER} AND id NOT IN (SELECT value FROM json_each(?)) LIMIT 1`).get(since, JSON.stringify(excluded)) !== undefined;
  }

  listWorkers(): Array<{ heartbeat: WorkerHeartbeat; firstSeenAt: number; lastSeenAt: number }> {
    return (this.sql('SELECT * FROM workers ORDER BY first_seen_at').all() as Row[]).map((r) => ({
      heartbeat: JSON.parse(r.heartbeat_json as string) as WorkerHeartbeat,
      firstSeenAt: r.first_seen_at as number,
      lastSeenAt: r.last_seen_at as number,
    }));
  }

  // ---- champion ------------------------------------------------------------------------------

  saveChampion(c: ChampionRecord, artifactsJson: string): void {
    this
      .sql(
        `INSERT OR REPLACE INTO champions (run_id, evaluation_id, source_evaluation_id, genome_hash, val_accuracy, test_accuracy, test_loss,
           test_predictions_json, artifacts_json, result_json, created_at) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`,
      )
      .run(c.runId, c.evaluationId, c.sourceEvaluationId, c.genomeHash, c.valAccuracy, c.testAccuracy, c.testLoss, JSON.stringify(c.testPredictions), artifactsJson, JSON.stringify(c.result), c.createdAt);
  }

  getChampion(runId: string): ChampionRecord | null {
    const r = this.sql('SELECT * FROM champions WHERE run_id = ?').get(runId) as Row | undefined;
    if (!r) return null;
    return {
      runId,
      evaluationId: r.evaluation_id as string,
      sourceEvaluationId: r.source_evaluation_id as string,
      genomeHash: r.genome_hash as string,
      valAccuracy: r.val_accuracy as number,
      testAccuracy: r.test_accuracy as number,
      testLoss: r.test_loss as number,
      testPredictions: JSON.parse(r.test_predictions_json as string) as number[],
      result: JSON.parse(r.result_json as string) as EvaluationResult,
      createdAt: r.created_at as number,
    };
  }

  /** The champion's trained model (TensorFlow.js layers format, as the worker sent it). */
  getChampionArtifactsJson(runId: string): string | null {
    const r = this.sql('SELECT artifacts_json FROM champions WHERE run_id = ?').get(runId) as Row | undefined;
    return r ? (r.artifacts_json as string) : null;
  }

  // ---- events --------------------------------------------------------------------------------

  /** Appends to the run's event log (rejections, reissues, state changes). */
  logEvent(runId: string | null, kind: string, detail: unknown, now = Date.now()): void {
    this.sql('INSERT INTO events (run_id, at, kind, detail_json) VALUES (?, ?, ?, ?)').run(runId, now, kind, JSON.stringify(detail));
  }

  /** How many events of `kind` name `evaluationId` (in their detail). */
  countEventsNaming(runId: string | null, kind: string, evaluationId: string): number {
    return (this
      .sql("SELECT COUNT(*) AS n FROM events WHERE run_id IS ? AND kind = ? AND json_extract(detail_json, '$.evaluationId') = ?")
      .get(runId, kind, evaluationId) as Row).n as number;
  }

  events(runId: string | null, kind?: string): Array<{ at: number; kind: string; detail: unknown }> {
    const rows = (kind
      ? this.sql('SELECT * FROM events WHERE run_id IS ? AND kind = ? ORDER BY id').all(runId, kind)
      : this.sql('SELECT * FROM events WHERE run_id IS ? ORDER BY id').all(runId)) as Row[];
    return rows.map((r) => ({ at: r.at as number, kind: r.kind as string, detail: JSON.parse(r.detail_json as string) }));
  }

  // ---- dashboard and metrics queries ---------------------------------------------------------

  /**
   * Finished (done or failed) search evaluations of a run with `finished_at >= since`, oldest first,
   * at most `limit`, each with its genome's size. Reads through `evaluations_by_run_finished`.
   */
  finishedSearchEvaluationsSince(runId: string, since: number, limit: number): Array<EvaluationRecord & { params: number; flops: number; backend: string | null; trainSeconds: number | null; samplesPerSecond: number | null }> {
    const rows = this
      .sql(
        `SELECT e.*, g.params, g.flops FROM evaluations e INDEXED BY evaluations_by_run_finished JOIN genomes g ON g.hash = e.genome_hash
         WHERE e.run_id = ? AND e.finished_at >= ? AND e.kind = 'search' AND e.state IN ('done', 'failed')
         ORDER BY e.finished_at, e.id LIMIT ?`,
      )
      .all(runId, since, limit) as Row[];
    return rows.map((r) => ({
      ...evaluationFromRow(r),
      params: r.params as number,
      flops: r.flops as number,
      backend: (r.backend as string | null) ?? null,
      trainSeconds: (r.train_seconds as number | null) ?? null,
      samplesPerSecond: (r.samples_per_second as number | null) ?? null,
    }));
  }

  /** When each done search evaluation of a run finished, how long it trained and how fast: the raw data of throughput over time. */
  trainingSpans(runId: string): Array<{ finishedAt: number; trainSeconds: number; samplesPerSecond: number }> {
    return (
      this
        .sql(
          `SELECT finished_at, train_seconds, samples_per_second FROM evaluations INDEXED BY evaluations_by_run_finished
           WHERE run_id = ? AND finished_at IS NOT NULL AND kind = 'search' AND state = 'done' ORDER BY finished_at`,
        )
        .all(runId) as Row[]
    ).map((r) => ({ finishedAt: r.finished_at as number, trainSeconds: (r.train_seconds as number | null) ?? 0, samplesPerSecond: (r.samples_per_second as number | null) ?? 0 }));
  }

  /** The best validation accuracy each of `hashes` reached in a run's search (absent when it has no done evaluation). */
  bestAccuracyByGenome(runId: string, hashes: readonly string[]): Map<string, number> {
    const out = new Map<string, number>();
    const stmt = this.sql(`SELECT MAX(val_accuracy) AS best FROM evaluations WHERE run_id = ? AND kind = 'search' AND state = 'done' AND genome_hash = ?`);
    for (const hash of new Set(hashes)) {
      const best = (stmt.get(runId, hash) as Row).best as number | null;
      if (best != null) out.set(hash, best);
    }
    return out;
  }

  /** How many events of `kind` the store holds: of one run (`null`: those of no run), or of all when `runId` is omitted. */
  countEvents(kind: string, runId?: string | null): number {
    const row = (runId === undefined
      ? this.sql('SELECT COUNT(*) AS n FROM events WHERE kind = ?').get(kind)
      : this.sql('SELECT COUNT(*) AS n FROM events WHERE run_id IS ? AND kind = ?').get(runId, kind)) as Row;
    return row.n as number;
  }

  // ---- checkpoints ---------------------------------------------------------------------------

  /**
   * Keeps `c` as the latest checkpoint of its (run, seq) unless one of a higher epoch is held.
   * Returns whether it was kept and the record it replaced (whose file may go).
   */
  recordCheckpoint(c: CheckpointRecord): { kept: boolean; replaced: CheckpointRecord | null } {
    return this.transaction(() => {
      const held = this.latestCheckpoint(c.runId, c.seq);
      if (held && held.epoch > c.epoch) return { kept: false, replaced: null };
      this
        .sql(
          `INSERT OR REPLACE INTO checkpoints (run_id, seq, evaluation_id, genome_hash, sha256, epoch, final, bytes, path, created_at)
           VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`,
        )
        .run(c.runId, c.seq, c.evaluationId, c.genomeHash, c.sha256, c.epoch, c.final ? 1 : 0, c.bytes, c.path, c.createdAt);
      return { kept: true, replaced: held && held.sha256 !== c.sha256 ? held : null };
    });
  }

  /** The latest checkpoint of an evaluation sequence, or null. */
  latestCheckpoint(runId: string, seq: number): CheckpointRecord | null {
    const r = this.sql('SELECT * FROM checkpoints WHERE run_id = ? AND seq = ?').get(runId, seq) as Row | undefined;
    return r ? checkpointFromRow(r) : null;
  }

  /** A held checkpoint by its content hash, or null. */
  checkpointBySha(sha256: string): CheckpointRecord | null {
    const r = this.sql('SELECT * FROM checkpoints WHERE sha256 = ? LIMIT 1').get(sha256) as Row | undefined;
    return r ? checkpointFromRow(r) : null;
  }

  /** The final checkpoint of the longest finished training of a genome in a run (a parent's weights), or null. */
  finalCheckpointOfGenome(runId: string, genomeHash: string): CheckpointRecord | null {
    const r = this
      .sql('SELECT * FROM checkpoints WHERE run_id = ? AND genome_hash = ? AND final = 1 ORDER BY epoch DESC, seq DESC LIMIT 1')
      .get(runId, genomeHash) as Row | undefined;
    return r ? checkpointFromRow(r) : null;
  }

  /** Forgets the checkpoint of an evaluation sequence; returns what was removed. */
  deleteCheckpoint(runId: string, seq: number): CheckpointRecord | null {
    const held = this.latestCheckpoint(runId, seq);
    if (held) this.sql('DELETE FROM checkpoints WHERE run_id = ? AND seq = ?').run(runId, seq);
    return held;
  }

  /** How many checkpoint rows name this file (0: the file may be deleted). */
  checkpointFileUses(sha256: string): number {
    return (this.sql('SELECT COUNT(*) AS n FROM checkpoints WHERE sha256 = ?').get(sha256) as Row).n as number;
  }

  // ---- search decisions and ensembles (migration 5) ------------------------------------------

  /** Appends one step of a run's search (a propose or observe call with its decisions, a submission, a refusal); returns its number. */
  addSearchStep(step: Omit<SearchStep, 'step'>): number {
    const next = (this.sql('SELECT COALESCE(MAX(step) + 1, 0) AS n FROM search_steps WHERE run_id = ?').get(step.runId) as Row).n as number;
    this
      .sql(
        `INSERT INTO search_steps (run_id, step, kind, evaluation_id, genome_hash, parent_hashes_json, budget_epochs, reason, decisions_json, at)
         VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`,
      )
      .run(step.runId, next, step.kind, step.evaluationId, step.genomeHash, JSON.stringify(step.parentHashes), step.budgetEpochs, step.reason, JSON.stringify(step.decisions), step.at);
    return next;
  }

  /** A run's search steps in the order they were made; with `genomeHashes`, only the steps about one of those genomes. */
  searchSteps(runId: string, genomeHashes?: readonly string[]): SearchStep[] {
    const rows = (genomeHashes
      ? this.sql(`SELECT * FROM search_steps WHERE run_id = ? AND genome_hash IN (SELECT value FROM json_each(?)) ORDER BY step`).all(runId, JSON.stringify(genomeHashes))
      : this.sql('SELECT * FROM search_steps WHERE run_id = ? ORDER BY step').all(runId)) as Row[];
    return rows.map((r) => ({
      runId,
      step: r.step as number,
      kind: r.kind as SearchStep['kind'],
      evaluationId: (r.evaluation_id as string | null) ?? null,
      genomeHash: (r.genome_hash as string | null) ?? null,
      parentHashes: JSON.parse(r.parent_hashes_json as string) as string[],
      budgetEpochs: (r.budget_epochs as number | null) ?? null,
      reason: r.reason as string,
      decisions: JSON.parse(r.decisions_json as string) as SearchDecision[],
      at: r.at as number,
    }));
  }

  /** Stores one retrained ensemble member with its model (replacing one at the same position). */
  saveEnsembleMember(m: EnsembleMemberRecord, artifactsJson: string): void {
    this
      .sql(
        `INSERT OR REPLACE INTO ensemble_members (run_id, position, evaluation_id, source_evaluation_id, genome_hash, test_accuracy, artifacts_json)
         VALUES (?, ?, ?, ?, ?, ?, ?)`,
      )
      .run(m.runId, m.position, m.evaluationId, m.sourceEvaluationId, m.genomeHash, m.testAccuracy, artifactsJson);
  }

  /** Forgets a run's ensemble members (before a new ensemble is trained). */
  clearEnsembleMembers(runId: string): void {
    this.sql('DELETE FROM ensemble_members WHERE run_id = ?').run(runId);
  }

  /** A run's retrained ensemble members by position, with their models' JSON. */
  ensembleMembers(runId: string): Array<EnsembleMemberRecord & { artifactsJson: string }> {
    return (this.sql('SELECT * FROM ensemble_members WHERE run_id = ? ORDER BY position').all(runId) as Row[]).map((r) => ({
      runId,
      position: r.position as number,
      evaluationId: r.evaluation_id as string,
      sourceEvaluationId: r.source_evaluation_id as string,
      genomeHash: r.genome_hash as string,
      testAccuracy: r.test_accuracy as number,
      artifactsJson: r.artifacts_json as string,
    }));
  }
}
