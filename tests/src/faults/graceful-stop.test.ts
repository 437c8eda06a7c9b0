import { afterAll, describe, expect, it } from 'vitest';
import { msUntilClockTime } from '@netbreeder/worker';
import { readRunConfigFile } from '@netbreeder/coordinator';
import { TestCluster, waitFor } from '../support/harness.js';
import { faultWorkerArgs, writeFaultRunFile } from '../support/fault-run.js';

/** Stopping a worker the polite way: it finishes the job it holds, says so, and exits cleanly. */
describe('graceful worker stop', () => {
  let cluster: TestCluster;
  afterAll(async () => {
    await cluster?.stop();
  });

  it('finishes the current job on SIGTERM, then exits with code 0', async () => {
    cluster = await TestCluster.start('graceful');
    const config = await readRunConfigFile(await writeFaultRunFile(cluster.dataDir, 4, 31));
    const polite = cluster.spawnWorker('polite', faultWorkerArgs());
    const store = cluster.coordinator.store;
    await waitFor('the worker to be ready', () => store.listWorkers().some((w) => w.heartbeat.backend && w.heartbeat.state === 'idle'), 60_000);
    await cluster.coordinator.startRun(config);
    const held = await waitFor('the worker to be training', () => store.listWorkers()[0]?.heartbeat.currentEvaluationId, 60_000, 50);
    const exited = new Promise<number | null>((r) => polite.once('exit', (code) => r(code)));
    polite.kill('SIGTERM');
    expect(await exited).toBe(0);
    const ev = store.getEvaluation(held)!;
    await waitFor('its result to be recorded', () => store.getEvaluation(held)!.state === 'done', 10_000, 100);
    expect(store.getEvaluation(held)!.result!.workerId).toBe('polite');
    expect(ev.id).toBe(held);
    expect(store.listWorkers()[0]!.heartbeat.state).toBe('stopped');
    expect(cluster.workerLogs.join('')).toMatch(/draining: finishing the current job/);
  }, 180_000);

  it('computes the time to a --until stop time on the local clock', () => {
    const now = new Date(2026, 11, 1, 22, 15, 0);
    expect(msUntilClockTime('07:30', now)).toBe((9 * 60 + 15) * 60_000);
    expect(msUntilClockTime('22:16', now)).toBe(60_000);
    expect(msUntilClockTime('22:15', now)).toBe(24 * 3_600_000); // now is past: tomorrow
    expect(() => msUntilClockTime('7.30', now)).toThrow(/HH:MM/);
    expect(() => msUntilClockTime('24:00', now)).toThrow(/HH:MM/);
  });
});
