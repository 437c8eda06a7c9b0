import { describe, expect, it } from 'vitest';
import type { EvaluationResult } from '@netbreeder/shared-types';
import { TrustStore } from './trust-store.js';
import { heartbeat, searchJob as job, searchResult, storeWithRun } from './test-fixtures.js';

const result = (evaluationId: string, workerId: string, cpuSeconds?: number): EvaluationResult =>
  searchResult(evaluationId, workerId, cpuSeconds === undefined ? {} : { cpuSeconds });

function stores() {
  const store = storeWithRun();
  return { store, trust: new TrustStore(store) };
}

describe('TrustStore: CPU accounting kept by triggers', () => {
  it('adds each recorded result once, with energy from the watts of the worker\'s heartbeat', () => {
    const { store, trust } = stores();
    store.upsertWorker(heartbeat('set', { watts: 20, wattsAssumed: false }), 1000);
    store.upsertWorker(heartbeat('assumed', { watts: 15, wattsAssumed: true }), 1000);
    store.upsertWorker(heartbeat('old'), 1000);
    for (const [i, w, cpu] of [[0, 'set', 360], [1, 'set', 360], [2, 'assumed', 720], [3, 'old', 100]] as const) {
      store.addEvaluation(job(`r1-s${i}-a1`), i, 1000, true);
      expect(store.recordResult(`r1-s${i}-a1`, result(`r1-s${i}-a1`, w, cpu), 2000)).toBe('recorded');
    }
    store.recordResult('r1-s0-a1', result('r1-s0-a1', 'set', 999), 3000); // a duplicate delivery adds nothing
    const rows = new Map(trust.cpuUsage('r1').map((r) => [r.workerId, r]));
    expect(rows.get('set')).toMatchObject({ kind: 'search', evaluations: 2, cpuSeconds: 720, assumedWattHours: 0, cpuSecondsWithoutWatts: 0 });
    expect(rows.get('set')!.wattHours).toBeCloseTo(4, 9); // 720 s × 20 W / 3600
    expect(rows.get('assumed')!.wattHours).toBeCloseTo(3, 9);
    expect(rows.get('assumed')!.assumedWattHours).toBeCloseTo(3, 9);
    expect(rows.get('old')).toMatchObject({ wattHours: 0, cpuSecondsWithoutWatts: 100 });
  });

  it('counts a finished verification as kind "verification", once', () => {
    const { store, trust } = stores();
    store.upsertWorker(heartbeat('v', { watts: 10, wattsAssumed: false }), 1000);
    trust.addVerification({ id: 'r1-s0-a1-v1', runId: 'r1', sourceEvaluationId: 'r1-s0-a1', opinion: 1, purpose: 'spot-check', job: job('r1-s0-a1-v1'), now: 1000 });
    expect(trust.openVerifications('r1').map((v) => v.id)).toEqual(['r1-s0-a1-v1']);
    // Only those queued before a time, when asked so (the timeout check reads no younger ones).
    expect(trust.openVerifications('r1', 1001).map((v) => v.id)).toEqual(['r1-s0-a1-v1']);
    expect(trust.openVerifications('r1', 1000)).toEqual([]);
    expect(trust.finishVerification('r1-s0-a1-v1', { state: 'done', result: result('r1-s0-a1-v1', 'v', 36) }, 2000)).toBe(true);
    expect(trust.finishVerification('r1-s0-a1-v1', { state: 'timed-out', error: 'late' }, 3000)).toBe(false);
    expect(trust.cpuUsage('r1')).toEqual([{ workerId: 'v', kind: 'verification', evaluations: 1, cpuSeconds: 36, wattHours: 0.1, assumedWattHours: 0, cpuSecondsWithoutWatts: 0 }]);
    expect(trust.openVerificationCount('r1')).toBe(0);
  });
});

describe('TrustStore: verdicts and worker trust', () => {
  it('keeps one verdict per result, counted by kind, and quarantines a worker once', () => {
    const { trust } = stores();
    expect(trust.saveVerdict({ evaluationId: 'e1', runId: 'r1', workerId: 'w', verdict: 'rejected', reason: 'x', decidedAt: 1 })).toBe(true);
    expect(trust.saveVerdict({ evaluationId: 'e1', runId: 'r1', workerId: 'w', verdict: 'confirmed', reason: 'y', decidedAt: 2 })).toBe(false);
    trust.saveVerdict({ evaluationId: 'e2', runId: 'r1', workerId: 'w', verdict: 'confirmed', reason: 'z', decidedAt: 3 });
    expect(trust.verdictCounts('r1')).toEqual({ confirmed: 1, rejected: 1, disputed: 0, unverified: 0 });
    expect(trust.getVerdict('e1')!.verdict).toBe('rejected');
    expect(trust.addTrust('w', { failed: 1 })).toMatchObject({ agreed: 0, failed: 1 });
    expect(trust.addTrust('w', { agreed: 2, failed: 1 })).toMatchObject({ agreed: 2, failed: 2 });
    expect(trust.quarantine('w', 'two failures', 5)).toBe(true);
    expect(trust.quarantine('w', 'again', 6)).toBe(false);
    expect(trust.trust('w')).toMatchObject({ quarantinedAt: 5, quarantineReason: 'two failures' });
    expect(trust.quarantinedWorkers()).toEqual(['w']);
  });
});
