import type { EvaluationJob, EvaluationResult } from '@netbreeder/shared-types';
import { VERDICT_KINDS, type CpuUsageRow, type VerdictKind, type VerdictRecord, type VerificationPurpose, type VerificationRecord, type WorkerTrustRecord } from './records.js';
import { num, oneOf, text } from './row.js';
import { cpuUsageFromRow, trustFromRow, verdictFromRow, verificationFromRow } from './row-mappers.js';
import { storeDatabase, type RunStore } from './run-store.js';
import type { StoreDatabase } from './store-database.js';

export type { CpuUsageRow, VerdictKind, VerdictRecord, VerificationPurpose, VerificationRecord, VerificationState, WorkerTrustRecord } from './records.js';

/**
 * The store's tables for replicated verification, worker trust and CPU accounting (migration 4),
 * on the same SQLite connection as {@link RunStore} (./store-database.ts), so its writes join the
 * run store's transactions. Every read here touches only a run's open verifications, one result's
 * verifications, the per-worker rows or the aggregates: nothing scans a run's history.
 */
export class TrustStore {
  private readonly db: StoreDatabase;

  constructor(store: RunStore) {
    this.db = storeDatabase(store);
  }

  addVerification(v: { id: string; runId: string; sourceEvaluationId: string; opinion: 1 | 2; purpose: VerificationPurpose; job: EvaluationJob; now: number }): void {
    this.db.run(
      `INSERT INTO verifications (id, run_id, source_evaluation_id, opinion, purpose, job_json, state, queued_at) VALUES (?, ?, ?, ?, ?, ?, 'queued', ?)`,
      v.id, v.runId, v.sourceEvaluationId, v.opinion, v.purpose, JSON.stringify(v.job), v.now,
    );
  }

  getVerification(id: string): VerificationRecord | null {
    const r = this.db.get('SELECT * FROM verifications WHERE id = ?', id);
    return r ? verificationFromRow(r) : null;
  }

  /** The verifications of one search result, second opinion first. */
  verificationsOf(sourceEvaluationId: string): VerificationRecord[] {
    return this.db.all('SELECT * FROM verifications WHERE source_evaluation_id = ? ORDER BY opinion', sourceEvaluationId).map(verificationFromRow);
  }

  /** A run's verifications still waiting for their result (those queued before `queuedBefore`, when given). */
  openVerifications(runId: string, queuedBefore = Number.MAX_SAFE_INTEGER): VerificationRecord[] {
    return this.db.all(`SELECT * FROM verifications WHERE run_id = ? AND state = 'queued' AND queued_at < ? ORDER BY queued_at`, runId, queuedBefore).map(verificationFromRow);
  }

  /** Closes a queued verification once (true when this call closed it). */
  finishVerification(id: string, outcome: { state: 'done'; result: EvaluationResult } | { state: 'failed' | 'timed-out'; error: string }, now: number): boolean {
    const changed =
      outcome.state === 'done'
        ? this.db.run(`UPDATE verifications SET state = 'done', finished_at = ?, worker_id = ?, result_json = ? WHERE id = ? AND state = 'queued'`, now, outcome.result.workerId, JSON.stringify({ ...outcome.result, model: undefined }), id)
        : this.db.run(`UPDATE verifications SET state = ?, finished_at = ?, error = ? WHERE id = ? AND state = 'queued'`, outcome.state, now, outcome.error.slice(0, 4000), id);
    return changed === 1;
  }

  getVerdict(evaluationId: string): VerdictRecord | null {
    const r = this.db.get('SELECT * FROM result_verdicts WHERE evaluation_id = ?', evaluationId);
    return r ? verdictFromRow(r) : null;
  }

  /** Records the final verdict on a result; a second verdict on the same result changes nothing (false). */
  saveVerdict(v: VerdictRecord): boolean {
    return (
      this.db.run('INSERT OR IGNORE INTO result_verdicts (evaluation_id, run_id, worker_id, verdict, reason, decided_at) VALUES (?, ?, ?, ?, ?, ?)', v.evaluationId, v.runId, v.workerId, v.verdict, v.reason.slice(0, 4000), v.decidedAt) === 1
    );
  }

  /** Verdicts of a run by kind (an aggregate kept by a trigger). */
  verdictCounts(runId: string): Record<VerdictKind, number> {
    const out: Record<VerdictKind, number> = { confirmed: 0, rejected: 0, disputed: 0, unverified: 0 };
    for (const r of this.db.all('SELECT verdict, n FROM verdict_counts WHERE run_id = ?', runId)) out[oneOf(r, 'verdict', VERDICT_KINDS)] = num(r, 'n');
    return out;
  }

  /** Queued verifications of a run (read through `verifications_by_run_state`). */
  openVerificationCount(runId: string): number {
    return this.db.count(`SELECT COUNT(*) AS n FROM verifications WHERE run_id = ? AND state = 'queued'`, runId);
  }

  trust(workerId: string): WorkerTrustRecord {
    const r = this.db.get('SELECT * FROM worker_trust WHERE worker_id = ?', workerId);
    return r ? trustFromRow(r) : { workerId, agreed: 0, failed: 0, quarantinedAt: null, quarantineReason: null };
  }

  allTrust(): WorkerTrustRecord[] {
    return this.db.all('SELECT * FROM worker_trust ORDER BY worker_id').map(trustFromRow);
  }

  addTrust(workerId: string, delta: { agreed?: number; failed?: number }): WorkerTrustRecord {
    this.db.run(
      `INSERT INTO worker_trust (worker_id, agreed, failed) VALUES (?, ?, ?)
       ON CONFLICT (worker_id) DO UPDATE SET agreed = agreed + excluded.agreed, failed = failed + excluded.failed`,
      workerId, delta.agreed ?? 0, delta.failed ?? 0,
    );
    return this.trust(workerId);
  }

  /** Quarantines a worker once (true when this call did). */
  quarantine(workerId: string, reason: string, now: number): boolean {
    this.addTrust(workerId, {});
    return this.db.run('UPDATE worker_trust SET quarantined_at = ?, quarantine_reason = ? WHERE worker_id = ? AND quarantined_at IS NULL', now, reason, workerId) === 1;
  }

  quarantinedWorkers(): string[] {
    return this.db.all('SELECT worker_id FROM worker_trust WHERE quarantined_at IS NOT NULL ORDER BY worker_id').map((r) => text(r, 'worker_id'));
  }

  /** A run's CPU time and energy per worker and kind (the incremental aggregate of migration 4). */
  cpuUsage(runId: string): CpuUsageRow[] {
    return this.db.all('SELECT * FROM cpu_usage WHERE run_id = ? ORDER BY worker_id, kind', runId).map(cpuUsageFromRow);
  }
}
