/**
 * The store's tables. The store is the source of truth for a run: Redis only carries jobs and may
 * lose them; everything needed to rebuild the queue and resume the search lives here.
 * Each entry runs once, in order; `PRAGMA user_version` records how many have run.
 */
export const MIGRATIONS: readonly string[] = [
  `
  CREATE TABLE runs (
    id TEXT PRIMARY KEY,
    name TEXT NOT NULL,
    config_json TEXT NOT NULL,
    state TEXT NOT NULL,
    seed INTEGER NOT NULL,
    dataset_json TEXT NOT NULL,
    search_snapshot_json TEXT,
    proposals INTEGER NOT NULL DEFAULT 0,
    created_at INTEGER NOT NULL,
    search_started_at INTEGER,
    finished_at INTEGER,
    failure TEXT
  );
  CREATE TABLE genomes (
    hash TEXT PRIMARY KEY,
    genome_json TEXT NOT NULL,
    params INTEGER NOT NULL,
    flops INTEGER NOT NULL,
    summary TEXT NOT NULL
  );
  CREATE TABLE evaluations (
    id TEXT PRIMARY KEY,
    run_id TEXT NOT NULL REFERENCES runs(id),
    kind TEXT NOT NULL CHECK (kind IN ('search', 'champion')),
    seq INTEGER NOT NULL,
    attempt INTEGER NOT NULL,
    genome_hash TEXT NOT NULL REFERENCES genomes(hash),
    seed INTEGER NOT NULL,
    job_json TEXT NOT NULL,
    state TEXT NOT NULL CHECK (state IN ('queued', 'running', 'done', 'failed')),
    queued_at INTEGER NOT NULL,
    started_at INTEGER,
    finished_at INTEGER,
    worker_id TEXT,
    backend TEXT,
    val_accuracy REAL,
    val_loss REAL,
    train_seconds REAL,
    samples_per_second REAL,
    result_json TEXT,
    error TEXT
  );
  CREATE INDEX evaluations_by_run_state ON evaluations(run_id, state);
  CREATE INDEX evaluations_by_run_finished ON evaluations(run_id, finished_at);
  CREATE INDEX evaluations_by_run_score ON evaluations(run_id, kind, val_accuracy);
  CREATE TABLE lineage (
    evaluation_id TEXT NOT NULL REFERENCES evaluations(id),
    run_id TEXT NOT NULL,
    child_hash TEXT NOT NULL,
    parent_hash TEXT NOT NULL,
    operator TEXT NOT NULL,
    detail TEXT NOT NULL,
    PRIMARY KEY (evaluation_id, parent_hash)
  );
  CREATE INDEX lineage_by_child ON lineage(run_id, child_hash);
  CREATE TABLE workers (
    id TEXT PRIMARY KEY,
    heartbeat_json TEXT NOT NULL,
    first_seen_at INTEGER NOT NULL,
    last_seen_at INTEGER NOT NULL
  );
  CREATE TABLE champions (
    run_id TEXT PRIMARY KEY REFERENCES runs(id),
    evaluation_id TEXT NOT NULL,
    source_evaluation_id TEXT NOT NULL,
    genome_hash TEXT NOT NULL,
    val_accuracy REAL NOT NULL,
    test_accuracy REAL NOT NULL,
    test_loss REAL NOT NULL,
    test_predictions_json TEXT NOT NULL,
    artifacts_json TEXT NOT NULL,
    result_json TEXT NOT NULL,
    created_at INTEGER NOT NULL
  );
  CREATE TABLE events (
    id INTEGER PRIMARY KEY AUTOINCREMENT,
    run_id TEXT,
    at INTEGER NOT NULL,
    kind TEXT NOT NULL,
    detail_json TEXT NOT NULL
  );
  CREATE INDEX events_by_run ON events(run_id, id);
  `,
  // 2: flat cost as a run grows. Counts by state are kept as incremental aggregates, maintained by
  // triggers in the same transaction as every write to `evaluations` (so no caller can forget
  // them), and finished search evaluations are indexed by score, so the best few are read without
  // sorting every result.
  `
  CREATE TABLE evaluation_counts (
    run_id TEXT NOT NULL,
    kind TEXT NOT NULL,
    state TEXT NOT NULL,
    n INTEGER NOT NULL,
    PRIMARY KEY (run_id, kind, state)
  ) WITHOUT ROWID;
  INSERT INTO evaluation_counts (run_id, kind, state, n) SELECT run_id, kind, state, COUNT(*) FROM evaluations GROUP BY run_id, kind, state;
  CREATE TRIGGER evaluation_counts_insert AFTER INSERT ON evaluations BEGIN
    INSERT INTO evaluation_counts (run_id, kind, state, n) VALUES (NEW.run_id, NEW.kind, NEW.state, 1)
      ON CONFLICT (run_id, kind, state) DO UPDATE SET n = n + 1;
  END;
  CREATE TRIGGER evaluation_counts_update AFTER UPDATE OF run_id, kind, state ON evaluations
    WHEN OLD.run_id IS NOT NEW.run_id OR OLD.kind IS NOT NEW.kind OR OLD.state IS NOT NEW.state BEGIN
    UPDATE evaluation_counts SET n = n - 1 WHERE run_id = OLD.run_id AND kind = OLD.kind AND state = OLD.state;
    INSERT INTO evaluation_counts (run_id, kind, state, n) VALUES (NEW.run_id, NEW.kind, NEW.state, 1)
      ON CONFLICT (run_id, kind, state) DO UPDATE SET n = n + 1;
  END;
  CREATE TRIGGER evaluation_counts_delete AFTER DELETE ON evaluations BEGIN
    UPDATE evaluation_counts SET n = n - 1 WHERE run_id = OLD.run_id AND kind = OLD.kind AND state = OLD.state;
  END;
  CREATE INDEX evaluations_by_run_kind_state_score ON evaluations(run_id, kind, state, val_accuracy DESC);
  `,
  // 3: training checkpoints. One row per evaluation sequence (run, seq): the latest checkpoint any
  // attempt of it uploaded (highest epoch), the file named by its sha256 under the data dir.
  `
  CREATE TABLE checkpoints (
    run_id TEXT NOT NULL REFERENCES runs(id),
    seq INTEGER NOT NULL,
    evaluation_id TEXT NOT NULL,
    genome_hash TEXT NOT NULL,
    sha256 TEXT NOT NULL,
    epoch INTEGER NOT NULL,
    final INTEGER NOT NULL,
    bytes INTEGER NOT NULL,
    path TEXT NOT NULL,
    created_at INTEGER NOT NULL,
    PRIMARY KEY (run_id, seq)
  );
  CREATE INDEX checkpoints_by_sha ON checkpoints(sha256);
  CREATE INDEX checkpoints_by_genome ON checkpoints(run_id, genome_hash, final, epoch);
  `,
  // 4: replicated verification and CPU accounting (coordinator/src/store/trust-store.ts).
  // `verifications` holds the re-runs of results on other workers (jobs of their own, outside
  // `evaluations`, so they never count as search evaluations); `result_verdicts` one final verdict
  // per verified result; `worker_trust` each worker's record and quarantine. `cpu_usage` is an
  // incremental aggregate per run, worker and kind, kept by triggers in the same transaction as
  // the write that finishes an evaluation or verification: CPU-seconds from the result, and energy
  // from the watts of the worker's last heartbeat (CPU-seconds whose worker sent no watts are kept
  // apart, for the reader to apply the default assumption).
  `
  CREATE TABLE verifications (
    id TEXT PRIMARY KEY,
    run_id TEXT NOT NULL,
    source_evaluation_id TEXT NOT NULL,
    opinion INTEGER NOT NULL CHECK (opinion IN (1, 2)),
    purpose TEXT NOT NULL CHECK (purpose IN ('spot-check', 'champion-candidate')),
    job_json TEXT NOT NULL,
    state TEXT NOT NULL CHECK (state IN ('queued', 'done', 'failed', 'timed-out')),
    queued_at INTEGER NOT NULL,
    finished_at INTEGER,
    worker_id TEXT,
    result_json TEXT,
    error TEXT
  );
  CREATE INDEX verifications_by_source ON verifications(source_evaluation_id, opinion);
  CREATE INDEX verifications_by_run_state ON verifications(run_id, state);
  CREATE TABLE result_verdicts (
    evaluation_id TEXT PRIMARY KEY,
    run_id TEXT NOT NULL,
    worker_id TEXT NOT NULL,
    verdict TEXT NOT NULL CHECK (verdict IN ('confirmed', 'rejected', 'disputed', 'unverified')),
    reason TEXT NOT NULL,
    decided_at INTEGER NOT NULL
  );
  CREATE TABLE verdict_counts (
    run_id TEXT NOT NULL,
    verdict TEXT NOT NULL,
    n INTEGER NOT NULL,
    PRIMARY KEY (run_id, verdict)
  ) WITHOUT ROWID;
  CREATE TRIGGER verdict_counts_insert AFTER INSERT ON result_verdicts BEGIN
    INSERT INTO verdict_counts (run_id, verdict, n) VALUES (NEW.run_id, NEW.verdict, 1)
      ON CONFLICT (run_id, verdict) DO UPDATE SET n = n + 1;
  END;
  CREATE TABLE worker_trust (
    worker_id TEXT PRIMARY KEY,
    agreed INTEGER NOT NULL DEFAULT 0,
    failed INTEGER NOT NULL DEFAULT 0,
    quarantined_at INTEGER,
    quarantine_reason TEXT
  );
  CREATE TABLE cpu_usage (
    run_id TEXT NOT NULL,
    worker_id TEXT NOT NULL,
    kind TEXT NOT NULL,
    evaluations INTEGER NOT NULL,
    cpu_seconds REAL NOT NULL,
    watt_hours REAL NOT NULL,
    assumed_watt_hours REAL NOT NULL,
    cpu_seconds_without_watts REAL NOT NULL,
    PRIMARY KEY (run_id, worker_id, kind)
  ) WITHOUT ROWID;
  INSERT INTO cpu_usage (run_id, worker_id, kind, evaluations, cpu_seconds, watt_hours, assumed_watt_hours, cpu_seconds_without_watts)
    SELECT run_id, worker_id, kind, COUNT(*), SUM(COALESCE(json_extract(result_json, '$.cpuSeconds'), 0)), 0, 0, SUM(COALESCE(json_extract(result_json, '$.cpuSeconds'), 0))
    FROM evaluations WHERE state = 'done' AND worker_id IS NOT NULL GROUP BY run_id, worker_id, kind;
  CREATE TRIGGER cpu_usage_evaluation_done AFTER UPDATE OF state ON evaluations
    WHEN NEW.state = 'done' AND OLD.state IS NOT 'done' AND NEW.worker_id IS NOT NULL BEGIN
    INSERT INTO cpu_usage (run_id, worker_id, kind, evaluations, cpu_seconds, watt_hours, assumed_watt_hours, cpu_seconds_without_watts)
      SELECT NEW.run_id, NEW.worker_id, NEW.kind, 1, c.s, c.s * COALESCE(w.watts, 0) / 3600.0,
             CASE WHEN w.assumed THEN c.s * w.watts / 3600.0 ELSE 0 END, CASE WHEN w.watts IS NULL THEN c.s ELSE 0 END
      FROM (SELECT COALESCE(json_extract(NEW.result_json, '$.cpuSeconds'), 0) AS s) c
      LEFT JOIN (SELECT json_extract(heartbeat_json, '$.watts') AS watts, json_extract(heartbeat_json, '$.wattsAssumed') AS assumed FROM workers WHERE id = NEW.worker_id) w ON 1
      WHERE 1
      ON CONFLICT (run_id, worker_id, kind) DO UPDATE SET evaluations = evaluations + 1, cpu_seconds = cpu_seconds + excluded.cpu_seconds,
        watt_hours = watt_hours + excluded.watt_hours, assumed_watt_hours = assumed_watt_hours + excluded.assumed_watt_hours,
        cpu_seconds_without_watts = cpu_seconds_without_watts + excluded.cpu_seconds_without_watts;
  END;
  CREATE TRIGGER cpu_usage_verification_done AFTER UPDATE OF state ON verifications
    WHEN NEW.state = 'done' AND OLD.state IS NOT 'done' AND NEW.worker_id IS NOT NULL BEGIN
    INSERT INTO cpu_usage (run_id, worker_id, kind, evaluations, cpu_seconds, watt_hours, assumed_watt_hours, cpu_seconds_without_watts)
      SELECT NEW.run_id, NEW.worker_id, 'verification', 1, c.s, c.s * COALESCE(w.watts, 0) / 3600.0,
             CASE WHEN w.assumed THEN c.s * w.watts / 3600.0 ELSE 0 END, CASE WHEN w.watts IS NULL THEN c.s ELSE 0 END
      FROM (SELECT COALESCE(json_extract(NEW.result_json, '$.cpuSeconds'), 0) AS s) c
      LEFT JOIN (SELECT json_extract(heartbeat_json, '$.watts') AS watts, json_extract(heartbeat_json, '$.wattsAssumed') AS assumed FROM workers WHERE id = NEW.worker_id) w ON 1
      WHERE 1
      ON CONFLICT (run_id, worker_id, kind) DO UPDATE SET evaluations = evaluations + 1, cpu_seconds = cpu_seconds + excluded.cpu_seconds,
        watt_hours = watt_hours + excluded.watt_hours, assumed_watt_hours = assumed_watt_hours + excluded.assumed_watt_hours,
        cpu_seconds_without_watts = cpu_seconds_without_watts + excluded.cpu_seconds_without_watts;
  END;
  `,
  // 5: every search decision with its reason, one row per call of the algorithm (or refusal by
  // the coordinator), in the order they were made, so a run replays from the store and its report
  // explains the champion's line; and the retrained members of an averaging ensemble.
  `
  CREATE TABLE search_steps (
    run_id TEXT NOT NULL REFERENCES runs(id),
    step INTEGER NOT NULL,
    kind TEXT NOT NULL CHECK (kind IN ('propose', 'observe', 'submit', 'reject', 'forget')),
    evaluation_id TEXT,
    genome_hash TEXT,
    parent_hashes_json TEXT NOT NULL,
    budget_epochs INTEGER,
    reason TEXT NOT NULL,
    decisions_json TEXT NOT NULL,
    at INTEGER NOT NULL,
    PRIMARY KEY (run_id, step)
  );
  CREATE INDEX search_steps_by_genome ON search_steps(run_id, genome_hash);
  CREATE TABLE ensemble_members (
    run_id TEXT NOT NULL REFERENCES runs(id),
    position INTEGER NOT NULL,
    evaluation_id TEXT NOT NULL,
    source_evaluation_id TEXT NOT NULL,
    genome_hash TEXT NOT NULL,
    test_accuracy REAL NOT NULL,
    artifacts_json TEXT NOT NULL,
    PRIMARY KEY (run_id, position)
  );
  `,
  // 6: every read of the event log names a run and a kind (the champion candidates, reissues,
  // rejections, a finish request), so it is indexed by both: a run's long log of verification and
  // fault events is not scanned to find one kind.
  `
  CREATE INDEX events_by_run_kind ON events(run_id, kind, id);
  `,
  // 7: the search's state (about 130 KB for a population of 100) moves out of the run's row. In the
  // row, every proposal's counter update rewrote it and every read of the run walked its overflow
  // pages to reach the columns after it.
  `
  CREATE TABLE search_snapshots (
    run_id TEXT PRIMARY KEY REFERENCES runs(id),
    snapshot_json TEXT NOT NULL
  );
  INSERT INTO search_snapshots (run_id, snapshot_json) SELECT id, search_snapshot_json FROM runs WHERE search_snapshot_json IS NOT NULL;
  ALTER TABLE runs DROP COLUMN search_snapshot_json;
  `,
  // 8: whether a worker said it stopped is a column of its own, and workers are indexed by when they
  // were last heard from: counting the live workers (every reconcile pass does) no longer decodes
  // every worker's heartbeat, which with a thousand workers cost more than the results.
  `
  ALTER TABLE workers ADD COLUMN stopped INTEGER NOT NULL DEFAULT 0;
  UPDATE workers SET stopped = (json_extract(heartbeat_json, '$.state') = 'stopped');
  CREATE INDEX workers_by_last_seen ON workers(last_seen_at, stopped);
  `,
  // 9: the index by finish time also holds each evaluation's kind and state, so counting the last
  // minute's results (every GET /status and /metrics) reads the index alone. Reading each row to
  // check them cost 1 ms per thousand results of that minute: most of /status at a fast pace.
  `
  DROP INDEX evaluations_by_run_finished;
  CREATE INDEX evaluations_by_run_finished ON evaluations(run_id, finished_at, kind, state);
  `,
];
