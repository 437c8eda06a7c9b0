import { afterAll, describe, expect, it } from 'vitest';
import { readRunConfigFile } from '@netbreeder/coordinator';
import { TestCluster, waitFor } from '../support/harness.js';
import { signalTree } from '../support/processes.js';
import { FAULT_LOCK_MS, FAULT_STALLED_CHECK_MS, faultWorkerArgs, writeFaultRunFile } from '../support/fault-run.js';

/**
 * A worker that is only slow: its process (and its training child) is frozen with SIGSTOP mid-job
 * for longer than its lock, as a suspended laptop or a long GC pause would. Another worker takes
 * the job over; when the slow one wakes and reports, its late result is refused by the queue
 * (its lock is gone) and the evaluation is recorded once, from the worker that took over.
 */
describe('a slow worker that reports after its lock was taken over', () => {
  let cluster: TestCluster;
  afterAll(async () => {
    await cluster?.stop();
  });

  it('is never recorded twice', async () => {
    cluster = await TestCluster.start('slow', { lockDurationMs: FAULT_LOCK_MS, stalledIntervalMs: FAULT_STALLED_CHECK_MS });
    const config = await readRunConfigFile(await writeFaultRunFile(cluster.dataDir, 8, 21));
    const sleepy = cluster.spawnWorker('sleepy', faultWorkerArgs());
    cluster.spawnWorker('steady', faultWorkerArgs());
    const store = cluster.coordinator.store;
    await cluster.waitForReadyWorkers(2);
    const run = await cluster.coordinator.startRun(config);

    const held = await waitFor('the sleepy worker to be training', () => store.listWorkers().find((w) => w.heartbeat.workerId === 'sleepy')?.heartbeat.currentEvaluationId, 60_000, 50);
    signalTree(sleepy.pid!, 'SIGSTOP');
    const frozenAt = Date.now();
    await waitFor('another worker to finish the frozen job', () => store.getEvaluation(held)?.state === 'done', 60_000, 200);
    const takeover = (Date.now() - frozenAt) / 1000;
    signalTree(sleepy.pid!, 'SIGCONT');
    // Give the woken worker time to finish its training and try to report.
    await waitFor('the woken worker to be idle or training again', () => {
      const hb = store.listWorkers().find((w) => w.heartbeat.workerId === 'sleepy')?.heartbeat;
      return hb && hb.currentEvaluationId !== held;
    }, 60_000, 200);
    await waitFor('the run to finish', () => store.getRun(run.id)!.state === 'finished', 120_000, 250);

    const ev = store.getEvaluation(held)!;
    expect(ev.result!.workerId).toBe('steady');
    const doneBySeq = new Map<number, number>();
    for (const e of store.evaluations(run.id)) if (e.kind === 'search' && e.state === 'done') doneBySeq.set(e.seq, (doneBySeq.get(e.seq) ?? 0) + 1);
    expect([...doneBySeq.values()].every((n) => n === 1)).toBe(true);
    expect(doneBySeq.size).toBe(8);
    // The bound we document: lock length plus one stalled-check interval, plus the retraining.
    process.stdout.write(`slow worker: job frozen on 'sleepy' was finished by 'steady' ${takeover.toFixed(1)} s later (lock ${FAULT_LOCK_MS} ms, check every ${FAULT_STALLED_CHECK_MS} ms)\n`);
  }, 240_000);
});
