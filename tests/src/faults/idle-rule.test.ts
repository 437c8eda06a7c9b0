import { afterAll, describe, expect, it } from 'vitest';
import { loadavg, cpus } from 'node:os';
import { readRunConfigFile } from '@netbreeder/coordinator';
import { TestCluster, waitFor } from '../support/harness.js';
import { writeFaultRunFile } from '../support/fault-run.js';

/**
 * The "only when idle" rule on a PC that is in use: a worker whose threshold is below the PC's
 * own load takes no job and says why; the same worker without the rule takes jobs at once.
 */
describe('the only-when-idle rule', () => {
  let cluster: TestCluster;
  afterAll(async () => {
    await cluster?.stop();
  });

  it('keeps a worker from taking jobs while the PC is busy', async () => {
    cluster = await TestCluster.start('idle');
    const config = await readRunConfigFile(await writeFaultRunFile(cluster.dataDir, 4, 51));
    // Make the PC busy for the length of the test: a tight loop on one core, in this process's child.
    const { spawn } = await import('node:child_process');
    const hog = spawn(process.execPath, ['-e', 'const end = Date.now() + 120000; while (Date.now() < end) {}']);
    try {
      await waitFor('the load to show the busy core', () => loadavg()[0]! / cpus().length > 0.05, 90_000, 500);
      cluster.spawnWorker('considerate', ['--idle-load', '0.01']);
      const store = cluster.coordinator.store;
      await waitFor('the worker to be ready', () => store.listWorkers().some((w) => w.heartbeat.backend), 60_000);
      const run = await cluster.coordinator.startRun(config);
      await waitFor('the worker to say the PC is in use', () => cluster.workerLogs.join('').includes('the PC is in use'), 30_000, 200);
      await new Promise((r) => setTimeout(r, 4000));
      expect(store.counts(run.id).done).toBe(0);
      expect(store.listWorkers()[0]!.heartbeat.currentEvaluationId).toBeNull();
      // A worker without the rule on the same busy PC takes the jobs.
      cluster.spawnWorker('eager');
      await waitFor('a result from the eager worker', () => store.evaluations(run.id).some((e) => e.state === 'done' && e.result!.workerId === 'eager'), 60_000, 200);
      expect(store.evaluations(run.id).filter((e) => e.state === 'done').every((e) => e.result!.workerId === 'eager')).toBe(true);
    } finally {
      hog.kill('SIGKILL');
    }
  }, 240_000);
});
