import { describe, expect, it } from 'vitest';
import { accountingByWorker, summarizeAccounting } from './accounting.js';
import type { CpuUsageRow } from '../store/trust-store.js';

const row = (workerId: string, kind: CpuUsageRow['kind'], cpuSeconds: number, watts: number | null, assumed = false): CpuUsageRow => ({
  workerId,
  kind,
  evaluations: 2,
  cpuSeconds,
  wattHours: watts === null ? 0 : (cpuSeconds * watts) / 3600,
  assumedWattHours: watts !== null && assumed ? (cpuSeconds * watts) / 3600 : 0,
  cpuSecondsWithoutWatts: watts === null ? cpuSeconds : 0,
});

describe('CPU accounting', () => {
  // Hand-computed: 3600 CPU-seconds at 20 W is 20 Wh.
  const rows = [row('a', 'search', 3600, 20), row('a', 'verification', 360, 20), row('b', 'search', 1800, 15, true), row('c', 'champion', 720, null)];

  it('sums CPU-seconds and energy by kind and in total, pricing CPU time without watts at the default and calling it assumed', () => {
    const s = summarizeAccounting(rows, 10);
    expect(s.search).toMatchObject({ evaluations: 4, cpuSeconds: 5400, cpuSecondsPerEvaluation: 1350 });
    expect(s.search.wattHours).toBeCloseTo(20 + 7.5, 9);
    expect(s.search.assumedWattHours).toBeCloseTo(7.5, 9);
    expect(s.verification.wattHours).toBeCloseTo(2, 9);
    expect(s.champion.wattHours).toBeCloseTo(2, 9); // 720 s at the default 10 W
    expect(s.champion.assumedWattHours).toBeCloseTo(2, 9);
    expect(s.total).toMatchObject({ evaluations: 8, cpuSeconds: 6480 });
    expect(s.total.wattHours).toBeCloseTo(31.5, 9);
    expect(s.energyNote).toMatch(/assumption/);
  });

  it('gives each worker its own figures', () => {
    const byWorker = accountingByWorker(rows, 10);
    expect(byWorker.get('a')).toMatchObject({ evaluations: 4, cpuSeconds: 3960 });
    expect(byWorker.get('a')!.wattHours).toBeCloseTo(22, 9);
    expect(byWorker.get('b')!.assumedWattHours).toBeCloseTo(7.5, 9);
  });

  it('is all zeros for a run without results', () => {
    expect(summarizeAccounting([]).total).toEqual({ evaluations: 0, cpuSeconds: 0, cpuSecondsPerEvaluation: 0, wattHours: 0, assumedWattHours: 0 });
  });
});
