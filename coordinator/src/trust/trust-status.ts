import type { AccountingStatus, VerificationStatus, WorkerHeartbeat, WorkerStatus } from '@netbreeder/shared-types';
import type { RunRecord } from '../store/run-store.js';
import { accountingByWorker, summarizeAccounting, sumCpuUsage } from './accounting.js';
import { reliability } from './trust-rules.js';
import { verificationSettings, type Verifier } from './verifier.js';

/**
 * The verification and accounting parts of GET /status: read from the aggregates (per run,
 * worker and kind; verdict counts; the worker trust rows), never from a run's history.
 */
export function trustStatus(verifier: Verifier, run: RunRecord | null) {
  const t = verifier.trust;
  const rows = run ? t.cpuUsage(run.id) : [];
  const byWorker = accountingByWorker(rows);
  const settings = run ? verificationSettings(run.config) : null;
  const records = new Map(t.allTrust().map((r) => [r.workerId, r])); // one query, not one per worker
  const accounting: AccountingStatus = summarizeAccounting(rows);
  const verification: VerificationStatus | undefined =
    run && settings
      ? {
          spotCheckFraction: settings.spotCheckFraction,
          timeoutSeconds: settings.timeoutSeconds,
          open: t.openVerificationCount(run.id),
          ...t.verdictCounts(run.id),
          quarantinedWorkers: t.quarantinedWorkers(),
        }
      : undefined;
  return {
    run: { accounting, ...(verification ? { verification } : {}) },
    worker: (hb: WorkerHeartbeat): Pick<WorkerStatus, 'trust' | 'cpu' | 'watts' | 'wattsAssumed'> => {
      const record = records.get(hb.workerId) ?? { agreed: 0, failed: 0, quarantinedAt: null, quarantineReason: null };
      return {
        trust: { reliability: reliability(record), agreed: record.agreed, failed: record.failed, quarantined: record.quarantinedAt !== null, quarantineReason: record.quarantineReason },
        cpu: byWorker.get(hb.workerId) ?? sumCpuUsage([]),
        ...(hb.watts !== undefined ? { watts: hb.watts, wattsAssumed: hb.wattsAssumed ?? true } : {}),
      };
    },
  };
}
