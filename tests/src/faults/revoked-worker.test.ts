import { afterAll, describe, expect, it } from 'vitest';
import { readRunConfigFile } from '@netbreeder/coordinator';
import { TestCluster, waitFor } from '../support/harness.js';
import { faultWorkerArgs, writeFaultRunFile } from '../support/fault-run.js';

/**
 * Revoking a worker id (a PC with faulty memory, or one that left the office): the worker is told
 * at its next heartbeat and leaves, giving its job back; nothing it reports afterwards counts.
 */
describe('a revoked worker', () => {
  let cluster: TestCluster;
  afterAll(async () => {
    await cluster?.stop();
  });

  it('stops, and the run completes on the other workers with none of its later results', async () => {
    cluster = await TestCluster.start('revoke');
    const config = await readRunConfigFile(await writeFaultRunFile(cluster.dataDir, 10, 41));
    const suspect = cluster.spawnWorker('suspect', [...faultWorkerArgs()]);
    cluster.spawnWorker('trusted', faultWorkerArgs());
    const store = cluster.coordinator.store;
    await cluster.waitForReadyWorkers(2);
    const run = await cluster.coordinator.startRun(config);
    await waitFor('the suspect to be training', () => store.listWorkers().find((w) => w.heartbeat.workerId === 'suspect')?.heartbeat.currentEvaluationId, 60_000, 50);

    const res = await fetch(`${cluster.coordinator.url}/workers/suspect/revoke`, {
      method: 'POST',
      headers: { 'content-type': 'application/json', authorization: `Bearer ${cluster.coordinator.secrets.adminToken}` },
      body: JSON.stringify({ reason: 'memory errors reported by IT' }),
    });
    expect(res.status).toBe(200);
    const revokedAt = Date.now();
    const exit = await new Promise<number | null>((r) => (suspect.exitCode !== null ? r(suspect.exitCode) : suspect.once('exit', (code) => r(code))));
    // It ends with a non-zero code and one sentence: retrying cannot undo the admin's decision.
    expect(exit).toBe(1);
    expect(cluster.workerLogs.join('')).toMatch(/revoked this worker id \(HTTP 403\): ask the coordinator's admin why/);

    await waitFor('the run to finish', () => store.getRun(run.id)!.state === 'finished', 180_000, 250);
    const late = store.evaluations(run.id).filter((e) => e.state === 'done' && e.result!.workerId === 'suspect' && e.finishedAt! > revokedAt + 1000);
    expect(late).toEqual([]);
    const doneSeqs = new Set(store.evaluations(run.id).filter((e) => e.kind === 'search' && e.state === 'done').map((e) => e.seq));
    expect(doneSeqs.size).toBe(10);
  }, 240_000);
});
