import { afterAll, describe, expect, it } from 'vitest';
import { readRunConfigFile } from '@netbreeder/coordinator';
import { TestCluster, waitFor } from '../support/harness.js';
import { freePort, startRedisServer, type Managed } from '../support/processes.js';
import { FAULT_LOCK_MS, FAULT_STALLED_CHECK_MS, faultWorkerArgs, writeFaultRunFile } from '../support/fault-run.js';

/**
 * Redis restarted with nothing kept (its own redis-server here, so no other test's keys are
 * touched): the coordinator notices, rebuilds the queue from its store, and the workers reconnect
 * by themselves; every evaluation is still recorded once.
 */
describe('Redis restarted empty mid-run', () => {
  let cluster: TestCluster;
  let redis: Managed;
  afterAll(async () => {
    await cluster?.stop();
    redis?.child.kill('SIGKILL');
  });

  it('is rebuilt from the store and the run completes', async () => {
    const port = await freePort();
    redis = await startRedisServer(port);
    const redisUrl = `redis://127.0.0.1:${port}`;
    cluster = await TestCluster.start('redis-restart', { lockDurationMs: FAULT_LOCK_MS, stalledIntervalMs: FAULT_STALLED_CHECK_MS, redisUrl });
    const config = await readRunConfigFile(await writeFaultRunFile(cluster.dataDir, 12, 91));
    cluster.spawnWorker('rr1', faultWorkerArgs());
    cluster.spawnWorker('rr2', faultWorkerArgs());
    await cluster.waitForReadyWorkers(2);
    const run = await cluster.coordinator.startRun(config);
    const store = cluster.coordinator.store;
    await waitFor('a few results', () => store.counts(run.id).done >= 3, 120_000, 200);
    redis.child.kill('SIGKILL');
    await redis.exited;
    redis = await startRedisServer(port);
    await waitFor('the run to finish', () => store.getRun(run.id)!.state === 'finished', 180_000, 250);
    expect(store.events(run.id, 'queue-rebuilt').length).toBeGreaterThanOrEqual(1);
    const done = store.evaluations(run.id).filter((e) => e.kind === 'search' && e.state === 'done');
    expect(new Set(done.map((e) => e.seq)).size).toBe(12);
    expect(done).toHaveLength(12);
  }, 300_000);
});
