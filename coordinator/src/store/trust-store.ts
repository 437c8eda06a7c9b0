import type { EvaluationJob, EvaluationResult } from '@netbreeder/shared-types';
import type { RunStore } from './run-store.js';

/** Why a result is re-run: a random spot check, or because it is about to give a champion candidate. */
export type VerificationPurpose = 'spot-check' | 'champion-candidate';
export type VerificationState = 'queued' | 'done' | 'failed' | 'timed-out';

/** One re-run of a search result on another worker (its own job, outside the run's evaluations). */
export interface VerificationRecord {
  id: string;
  runId: string;
  sourceEvaluationId: string;
  /** 1: the second opinion on the result; 2: the third, asked when the second disagreed. */
  opinion: 1 | 2;
  purpose: VerificationPurpose;
  job: EvaluationJob;
  state: VerificationState;
  queuedAt: number;
  finishedAt: number | null;
  workerId: string | null;
  result: EvaluationResult | null;
  error: string | null;
}

export type VerdictKind = 'confirmed' | 'rejected' | 'disputed' | 'unverified';

/** The final verdict on one verified search result. */
export interface VerdictRecord {
  evaluationId: string;
  runId: string;
  /** The worker that produced the verified result. */
  workerId: string;
  verdict: VerdictKind;
  reason: string;
  decidedAt: number;
}

/** A worker's verification record, over every run of this store. */
export interface WorkerTrustRecord {
  workerId: string;
  agreed: number;
  failed: number;
  quarantinedAt: number | null;
  quarantineReason: string | null;
}

/** CPU time and energy of one worker in one run, for one kind of job. */
export interface CpuUsageRow {
  workerId: string;
  kind: 'search' | 'champion' | 'verification';
  evaluations: number;
  cpuSeconds: number;
  /** Energy from the watts the worker sent. */
  wattHours: number;
  /** The part of `wattHours` that rests on the worker's default (assumed) watts. */
  assumedWattHours: number;
  /** CPU-seconds of results whose worker sent no watts (the reader applies the default). */
  cpuSecondsWithoutWatts: number;
}

type Row = Record<string, unknown>;

const verificationFromRow = (r: Row): VerificationRecord => ({
  id: r.id as string,
  runId: r.run_id as string,
  sourceEvaluationId: r.source_evaluation_id as string,
  opinion: r.opinion as 1 | 2,
  purpose: r.purpose as VerificationPurpose,
  job: JSON.parse(r.job_json as string) as EvaluationJob,
  state: r.state as VerificationState,
  queuedAt: r.queued_at as number,
  finishedAt: (r.finished_at as number | null) ?? null,
  workerId: (r.worker_id as string | null) ?? null,
  result: r.result_json ? (JSON.parse(r.result_json as string) as EvaluationResult) : null,
  error: (r.error as string | null) ?? null,
});

const trustFromRow = (r: Row): WorkerTrustRecord => ({
  workerId: r.worker_id as string,
  agreed: r.agreed as number,
  failed: r.failed as number,
  quarantinedAt: (r.quarantined_at as number | null) ?? null,
  quarantineReason: (r.quarantine_reason as string | null) ?? null,
});

/**
 * The store's tables for replicated verification, worker trust and CPU accounting (migration 4),
 * on the same SQLite connection as {@link RunStore}, so its writes join the run store's
 * transactions. Every read here touches only a run's open verifications, one result's
 * verifications, the per-worker rows or the aggregates: nothing scans a run's history.
 */
export class TrustStore {
  constructor(private readonly store: RunStore) {}

  /** The store's cached prepared statement for `sql`. */
  private sql(sql: string) {
    return this.store.statement(sql);
  }

  addVerification(v: { id: string; runId: string; sourceEvaluationId: string; opinion: 1 | 2; purpose: VerificationPurpose; job: EvaluationJob; now: number }): void {
    this.sql(`INSERT INTO verifications (id, run_id, source_evaluation_id, opinion, purpose, job_json, state, queued_at) VALUES (?, ?, ?, ?, ?, ?, 'queued', ?)`)
      .run(v.id, v.runId, v.sourceEvaluationId, v.opinion, v.purpose, JSON.stringify(v.job), v.now);
  }

  getVerification(id: string): VerificationRecord | null {
    const r = this.sql('SELECT * FROM verifications WHERE id = ?').get(id) as Row | undefined;
    return r ? verificationFromRow(r) : null;
  }

  /** The verifications of one search result, second opinion first. */
  verificationsOf(sourceEvaluationId: string): VerificationRecord[] {
    return (this.sql('SELECT * FROM verifications WHERE source_evaluation_id = ? ORDER BY opinion').all(sourceEvaluationId) as Row[]).map(verificationFromRow);
  }

  /** A run's verifications still waiting for their result (those queued before `queuedBefore`, when given). */
  openVerifications(runId: string, queuedBefore = Number.MAX_SAFE_INTEGER): VerificationRecord[] {
    return (this.sql(`SELECT * FROM verifications WHERE run_id = ? AND state = 'queued' AND queued_at < ? ORDER BY queued_at`).all(runId, queuedBefore) as Row[]).map(verificationFromRow);
  }

  /** Closes a queued verification once (true when this call closed it). */
  finishVerification(id: string, outcome: { state: 'done'; result: EvaluationResult } | { state: 'failed' | 'timed-out'; error: string }, now: number): boolean {
    const info =
      outcome.state === 'done'
        ? this.sql(`UPDATE verifications SET state = 'done', finished_at = ?, worker_id = ?, result_json = ? WHERE id = ? AND state = 'queued'`)
            .run(now, outcome.result.workerId, JSON.stringify({ ...outcome.result, model: undefined }), id)
        : this.sql(`UPDATE verifications SET state = ?, finished_at = ?, error = ? WHERE id = ? AND state = 'queued'`).run(outcome.state, now, outcome.error.slice(0, 4000), id);
    return info.changes === 1;
  }

  getVerdict(evaluationId: string): VerdictRecord | null {
    const r = this.sql('SELECT * FROM result_verdicts WHERE evaluation_id = ?').get(evaluationId) as Row | undefined;
    if (!r) return null;
    return { evaluationId, runId: r.run_id as string, workerId: r.worker_id as string, verdict: r.verdict as VerdictKind, reason: r.reason as string, decidedAt: r.decided_at as number };
  }

  /** Records the final verdict on a result; a second verdict on the same result changes nothing (false). */
  saveVerdict(v: VerdictRecord): boolean {
    return (
      this.sql('INSERT OR IGNORE INTO result_verdicts (evaluation_id, run_id, worker_id, verdict, reason, decided_at) VALUES (?, ?, ?, ?, ?, ?)')
        .run(v.evaluationId, v.runId, v.workerId, v.verdict, v.reason.slice(0, 4000), v.decidedAt).changes === 1
    );
  }

  /** Verdicts of a run by kind (an aggregate kept by a trigger). */
  verdictCounts(runId: string): Record<VerdictKind, number> {
    const out: Record<VerdictKind, number> = { confirmed: 0, rejected: 0, disputed: 0, unverified: 0 };
    for (const r of this.sql('SELECT verdict, n FROM verdict_counts WHERE run_id = ?').all(runId) as Row[]) out[r.verdict as VerdictKind] = r.n as number;
    return out;
  }

  /** Queued verifications of a run (read through `verifications_by_run_state`). */
  openVerificationCount(runId: string): number {
    return (this.sql(`SELECT COUNT(*) AS n FROM verifications WHERE run_id = ? AND state = 'queued'`).get(runId) as Row).n as number;
  }

  trust(workerId: string): WorkerTrustRecord {
    const r = this.sql('SELECT * FROM worker_trust WHERE worker_id = ?').get(workerId) as Row | undefined;
    return r ? trustFromRow(r) : { workerId, agreed: 0, failed: 0, quarantinedAt: null, quarantineReason: null };
  }

  allTrust(): WorkerTrustRecord[] {
    return (this.sql('SELECT * FROM worker_trust ORDER BY worker_id').all() as Row[]).map(trustFromRow);
  }

  addTrust(workerId: string, delta: { agreed?: number; failed?: number }): WorkerTrustRecord {
    this.sql(
        `INSERT INTO worker_trust (worker_id, agreed, failed) VALUES (?, ?, ?)
         ON CONFLICT (worker_id) DO UPDATE SET agreed = agreed + excluded.agreed, failed = failed + excluded.failed`,
      )
      .run(workerId, delta.agreed ?? 0, delta.failed ?? 0);
    return this.trust(workerId);
  }

  /** Quarantines a worker once (true when this call did). */
  quarantine(workerId: string, reason: string, now: number): boolean {
    this.addTrust(workerId, {});
    return this.sql('UPDATE worker_trust SET quarantined_at = ?, quarantine_reason = ? WHERE worker_id = ? AND quarantined_at IS NULL').run(now, reason, workerId).changes === 1;
  }

  quarantinedWorkers(): string[] {
    return (this.sql('SELECT worker_id FROM worker_trust WHERE quarantined_at IS NOT NULL ORDER BY worker_id').all() as Row[]).map((r) => r.worker_id as string);
  }

  /** A run's CPU time and energy per worker and kind (the incremental aggregate of migration 4). */
  cpuUsage(runId: string): CpuUsageRow[] {
    return (this.sql('SELECT * FROM cpu_usage WHERE run_id = ? ORDER BY worker_id, kind').all(runId) as Row[]).map((r) => ({
      workerId: r.worker_id as string,
      kind: r.kind as CpuUsageRow['kind'],
      evaluations: r.evaluations as number,
      cpuSeconds: r.cpu_seconds as number,
      wattHours: r.watt_hours as number,
      assumedWattHours: r.assumed_watt_hours as number,
      cpuSecondsWithoutWatts: r.cpu_seconds_without_watts as number,
    }));
  }
}
