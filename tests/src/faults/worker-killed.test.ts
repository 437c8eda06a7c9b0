import { afterAll, describe, expect, it } from 'vitest';
import { readRunConfigFile } from '@netbreeder/coordinator';
import { TestCluster, waitFor } from '../support/harness.js';
import { signalTree } from '../support/processes.js';
import { FAULT_LOCK_MS, FAULT_STALLED_CHECK_MS, faultWorkerArgs, writeFaultRunFile } from '../support/fault-run.js';

/**
 * A worker killed with SIGKILL mid-training (a PC switched off): its job goes back to the queue
 * when its lock runs out, another worker trains it, and it is recorded once. Bound: lock length
 * plus one stalled-check interval, plus the retraining (docs/operating.md, "When PCs vanish").
 */
describe('a worker killed mid-job', () => {
  let cluster: TestCluster;
  afterAll(async () => {
    await cluster?.stop();
  });

  it('has its job trained again by another worker and recorded once', async () => {
    cluster = await TestCluster.start('killed', { lockDurationMs: FAULT_LOCK_MS, stalledIntervalMs: FAULT_STALLED_CHECK_MS });
    const config = await readRunConfigFile(await writeFaultRunFile(cluster.dataDir, 6, 71));
    const doomed = cluster.spawnWorker('doomed', faultWorkerArgs());
    cluster.spawnWorker('survivor', faultWorkerArgs());
    await cluster.waitForReadyWorkers(2);
    const run = await cluster.coordinator.startRun(config);
    const store = cluster.coordinator.store;
    const held = await waitFor('the doomed worker to be training', () => store.listWorkers().find((w) => w.heartbeat.workerId === 'doomed')?.heartbeat.currentEvaluationId, 60_000, 50);
    signalTree(doomed.pid!, 'SIGKILL');
    const killedAt = Date.now();
    const seqPrefix = held.replace(/-a\d+$/, '-');
    await waitFor('the held job to be done by another worker', () => store.evaluations(run.id).some((e) => e.id.startsWith(seqPrefix) && e.state === 'done'), 90_000, 200);
    const recovery = (Date.now() - killedAt) / 1000;
    await waitFor('the run to finish', () => store.getRun(run.id)!.state === 'finished', 180_000, 250);
    const attempts = store.evaluations(run.id).filter((e) => e.id.startsWith(seqPrefix));
    expect(attempts.filter((e) => e.state === 'done')).toHaveLength(1);
    expect(attempts.find((e) => e.state === 'done')!.result!.workerId).toBe('survivor');
    const doneSeqs = store.evaluations(run.id).filter((e) => e.kind === 'search' && e.state === 'done').map((e) => e.seq);
    expect(new Set(doneSeqs).size).toBe(6);
    expect(doneSeqs).toHaveLength(6);
    process.stdout.write(`worker killed: its job was done by another worker ${recovery.toFixed(1)} s later (lock ${FAULT_LOCK_MS} ms, check every ${FAULT_STALLED_CHECK_MS} ms)\n`);
  }, 240_000);
});
