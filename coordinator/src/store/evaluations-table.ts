import type { EvaluationJob, EvaluationResult, Genome } from '@netbreeder/shared-types';
import { json, num, numOrNull, oneOf, text, textOrNull } from './row.js';
import { evaluationFromRow, genomeFromRow } from './row-mappers.js';
import {
  EVALUATION_STATES,
  type EvaluationRecord,
  type EvaluationState,
  type FinishedSearchEvaluation,
  type GenomeRecord,
  type RankedEvaluation,
  type RecordOutcome,
  type TrainingSpan,
} from './records.js';
import type { StoreDatabase } from './store-database.js';

/**
 * Genomes (`genomes`) and the evaluations of them (`evaluations`): their states, results recorded
 * once, and the counts and rankings the status, the dashboard and the champion phase read.
 */
export class EvaluationsTable {
  constructor(private readonly db: StoreDatabase) {}

  putGenome(g: GenomeRecord): void {
    this.putGenomeJson({ ...g, genomeJson: JSON.stringify(g.genome) });
  }

  /** Stores a genome already written as JSON (the pre-fill copies one genome a million times: ./prefill.ts). */
  putGenomeJson(g: Omit<GenomeRecord, 'genome'> & { genomeJson: string }): void {
    this.db.run('INSERT OR IGNORE INTO genomes (hash, genome_json, params, flops, summary) VALUES (?, ?, ?, ?, ?)', g.hash, g.genomeJson, g.params, g.flops, g.summary);
  }

  getGenome(hash: string): GenomeRecord | null {
    const r = this.db.get('SELECT * FROM genomes WHERE hash = ?', hash);
    return r ? genomeFromRow(r) : null;
  }

  /** Inserts a queued evaluation. */
  add(job: EvaluationJob, seq: number, now: number): void {
    this.db.run(
      `INSERT INTO evaluations (id, run_id, kind, seq, attempt, genome_hash, seed, job_json, state, queued_at)
       VALUES (?, ?, ?, ?, ?, ?, ?, ?, 'queued', ?)`,
      job.evaluationId, job.runId, job.kind, seq, job.attempt, job.genomeHash, job.seed, JSON.stringify(job), now,
    );
  }

  get(id: string): EvaluationRecord | null {
    const r = this.db.get('SELECT * FROM evaluations WHERE id = ?', id);
    return r ? evaluationFromRow(r) : null;
  }

  /** Evaluations still owed a result (queued or running): what a rebuilt queue must hold. */
  pending(runId: string): EvaluationRecord[] {
    return this.db.all(`SELECT * FROM evaluations WHERE run_id = ? AND state IN ('queued', 'running') ORDER BY seq, attempt`, runId).map(evaluationFromRow);
  }

  /** Marks a queued evaluation running on a worker (from its heartbeat); no effect otherwise. */
  markRunning(id: string, workerId: string, now: number): boolean {
    return this.db.run(`UPDATE evaluations SET state = 'running', worker_id = ?, started_at = COALESCE(started_at, ?) WHERE id = ? AND state = 'queued'`, workerId, now, id) === 1;
  }

  /** Records a result once: a second delivery of the same evaluation changes nothing. */
  recordResult(id: string, result: EvaluationResult, now: number): RecordOutcome {
    const changed = this.db.run(
      `UPDATE evaluations SET state = 'done', finished_at = ?, worker_id = ?, backend = ?, val_accuracy = ?, val_loss = ?,
         train_seconds = ?, samples_per_second = ?, result_json = ?, started_at = COALESCE(started_at, ?)
       WHERE id = ? AND state IN ('queued', 'running')`,
      now, result.workerId, result.backend, result.valAccuracy, result.valLoss, result.trainSeconds, result.samplesPerSecond, JSON.stringify({ ...result, model: undefined }), now, id,
    );
    return this.outcome(id, changed);
  }

  /** Records a failed attempt once. */
  recordFailure(id: string, error: string, now: number): RecordOutcome {
    const changed = this.db.run(`UPDATE evaluations SET state = 'failed', finished_at = ?, error = ? WHERE id = ? AND state IN ('queued', 'running')`, now, error.slice(0, 4000), id);
    return this.outcome(id, changed);
  }

  private outcome(id: string, changed: number): RecordOutcome {
    if (changed === 1) return 'recorded';
    return this.get(id) ? 'duplicate' : 'unknown-evaluation';
  }

  /** Counts of one kind of evaluation by state. */
  counts(runId: string, kind: EvaluationRecord['kind']): Record<EvaluationState, number> {
    const out: Record<EvaluationState, number> = { queued: 0, running: 0, done: 0, failed: 0 };
    // Kept by triggers in the same transaction as every write (migration 2): no scan of the run's rows.
    for (const r of this.db.all('SELECT state, n FROM evaluation_counts WHERE run_id = ? AND kind = ?', runId, kind)) out[oneOf(r, 'state', EVALUATION_STATES)] = num(r, 'n');
    return out;
  }

  /** A run's evaluations (of one kind only, with `kind`: read through the index, not the whole run), by seq and attempt. */
  list(runId: string, kind?: EvaluationRecord['kind']): EvaluationRecord[] {
    const rows = kind
      ? this.db.all('SELECT * FROM evaluations WHERE run_id = ? AND kind = ? ORDER BY seq, attempt', runId, kind)
      : this.db.all('SELECT * FROM evaluations WHERE run_id = ? ORDER BY seq, attempt', runId);
    return rows.map(evaluationFromRow);
  }

  // ---- status, dashboard and champion queries ------------------------------------------------

  /** Search evaluations finished (done) since `since` (ms epoch); reads only the rows in that time range. */
  doneSince(runId: string, since: number): number {
    return this.db.count(`SELECT COUNT(*) AS n FROM evaluations INDEXED BY evaluations_by_run_finished WHERE run_id = ? AND finished_at >= ? AND kind = 'search' AND state = 'done'`, runId, since);
  }

  /**
   * The best finished search evaluations: highest validation accuracy, then fewest parameters.
   * Walks `evaluations_by_run_kind_state_score` from the top, so only the leading rows are read.
   */
  top(runId: string, limit: number): RankedEvaluation[] {
    const rows = this.db.all(
      `SELECT e.*, g.params, g.flops, g.summary, g.genome_json FROM evaluations e INDEXED BY evaluations_by_run_kind_state_score
       JOIN genomes g ON g.hash = e.genome_hash
       WHERE e.run_id = ? AND e.kind = 'search' AND e.state = 'done'
       ORDER BY e.val_accuracy DESC, g.params ASC, e.seq ASC LIMIT ?`,
      runId, limit,
    );
    return rows.map((r) => ({ ...evaluationFromRow(r), params: num(r, 'params'), flops: num(r, 'flops'), summary: text(r, 'summary'), genome: json<Genome>(r, 'genome_json') }));
  }

  /**
   * Finished (done or failed) search evaluations of a run with `finished_at >= since`, oldest first,
   * at most `limit`, each with its genome's size. Reads through `evaluations_by_run_finished`.
   */
  finishedSearchSince(runId: string, since: number, limit: number): FinishedSearchEvaluation[] {
    const rows = this.db.all(
      `SELECT e.*, g.params, g.flops FROM evaluations e INDEXED BY evaluations_by_run_finished JOIN genomes g ON g.hash = e.genome_hash
       WHERE e.run_id = ? AND e.finished_at >= ? AND e.kind = 'search' AND e.state IN ('done', 'failed')
       ORDER BY e.finished_at, e.id LIMIT ?`,
      runId, since, limit,
    );
    return rows.map((r) => ({
      ...evaluationFromRow(r),
      params: num(r, 'params'),
      flops: num(r, 'flops'),
      backend: textOrNull(r, 'backend'),
      trainSeconds: numOrNull(r, 'train_seconds'),
      samplesPerSecond: numOrNull(r, 'samples_per_second'),
    }));
  }

  /** When each done search evaluation of a run finished, how long it trained and how fast: the raw data of throughput over time. */
  trainingSpans(runId: string): TrainingSpan[] {
    const rows = this.db.all(
      `SELECT finished_at, train_seconds, samples_per_second FROM evaluations INDEXED BY evaluations_by_run_finished
       WHERE run_id = ? AND finished_at IS NOT NULL AND kind = 'search' AND state = 'done' ORDER BY finished_at`,
      runId,
    );
    return rows.map((r) => ({ finishedAt: num(r, 'finished_at'), trainSeconds: numOrNull(r, 'train_seconds') ?? 0, samplesPerSecond: numOrNull(r, 'samples_per_second') ?? 0 }));
  }

  /** The best validation accuracy each of `hashes` reached in a run's search (absent when it has no done evaluation). */
  bestAccuracyByGenome(runId: string, hashes: readonly string[]): Map<string, number> {
    const out = new Map<string, number>();
    for (const hash of new Set(hashes)) {
      const best = numOrNull(this.db.get(`SELECT MAX(val_accuracy) AS best FROM evaluations WHERE run_id = ? AND kind = 'search' AND state = 'done' AND genome_hash = ?`, runId, hash) ?? {}, 'best');
      if (best != null) out.set(hash, best);
    }
    return out;
  }
}
