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
  // 3: every search decision with its reason, one row per call of the algorithm (or refusal by
  // the coordinator), in the order they were made, so a run replays from the store and its report
  // explains the champion's line; and the retrained members of an averaging ensemble.
  `
  CREATE TABLE search_steps (
    run_id TEXT NOT NULL REFERENCES runs(id),
    step INTEGER NOT NULL,
    kind TEXT NOT NULL CHECK (kind IN ('propose', 'observe', 'submit', 'reject')),
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
];
