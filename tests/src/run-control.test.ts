import { afterAll, describe, expect, it } from 'vitest';
import { readRunConfigFile, replayRun, type RunRecord } from '@netbreeder/coordinator';
import { TestCluster, waitFor } from './support/harness.js';
import { spawnCli } from './support/processes.js';
import { writeFaultRunFile } from './support/fault-run.js';

/** Pausing, resuming and finishing a run from the command line, and bringing one's own genome. */
describe('run control', () => {
  let cluster: TestCluster;
  let run: RunRecord;
  afterAll(async () => {
    await cluster?.stop();
  });
  const cli = async (...args: string[]) => {
    const p = spawnCli([...args, '--coordinator', cluster.coordinator.url], { NETBREEDER_ADMIN_TOKEN: cluster.coordinator.secrets.adminToken, NETBREEDER_LOG_LEVEL: 'warn' });
    const code = await p.exited;
    return { code, out: p.log.join('') };
  };

  it('pauses: nothing new is queued until it resumes', async () => {
    cluster = await TestCluster.start('control');
    const config = await readRunConfigFile(await writeFaultRunFile(cluster.dataDir, 200, 61));
    cluster.spawnWorker('c1');
    await cluster.waitForReadyWorkers(1);
    run = await cluster.coordinator.startRun(config);
    const store = cluster.coordinator.store;
    await waitFor('a first result', () => store.counts(run.id).done >= 1, 60_000, 200);
    const paused = await cli('pause', '--run', run.id);
    expect(paused.code, paused.out).toBe(0);
    expect(paused.out).toContain('is now paused');
    const proposalsAtPause = store.getRun(run.id)!.proposals;
    await waitFor('what was queued to drain', () => store.counts(run.id).queued + store.counts(run.id).running === 0, 60_000, 200);
    await new Promise((r) => setTimeout(r, 2500));
    expect(store.getRun(run.id)!.proposals).toBe(proposalsAtPause);
    expect((await cli('resume', '--run', run.id)).out).toContain('is now searching');
    await waitFor('new proposals after resuming', () => store.getRun(run.id)!.proposals > proposalsAtPause, 30_000, 200);
  }, 180_000);

  it('takes a genome the user brings, checked against the search space, and evaluates it', async () => {
    const genome = {
      schemaVersion: 1,
      nodes: [
        { id: 'c1', kind: 'conv2d', inputs: ['input'], filters: 8, kernelSize: 3, strides: 1, padding: 'same', activation: 'relu' },
        { id: 'p1', kind: 'max-pool2d', inputs: ['c1'], poolSize: 2, strides: 2 },
        { id: 'g', kind: 'global-avg-pool', inputs: ['p1'] },
      ],
      output: 'g',
      training: { optimizer: 'adam', learningRate: 0.003, batchSize: 32, weightDecay: 0, epochs: 8 },
    };
    const res = await fetch(`${cluster.coordinator.url}/runs/${run.id}/genomes`, {
      method: 'POST',
      headers: { 'content-type': 'application/json', authorization: `Bearer ${cluster.coordinator.secrets.adminToken}` },
      body: JSON.stringify({ genome }),
    });
    expect(res.status).toBe(201);
    const { evaluationId } = (await res.json()) as { evaluationId: string };
    await waitFor('the submitted genome to be trained', () => cluster.coordinator.store.getEvaluation(evaluationId)?.state === 'done', 60_000, 200);
    expect(cluster.coordinator.store.getGenome(cluster.coordinator.store.getEvaluation(evaluationId)!.genomeHash)!.summary).toContain('conv2d 3×3×8');
  }, 120_000);

  it('finishes early: the search ends, the champion is trained, scored and exported', async () => {
    const finish = await cli('finish', '--run', run.id);
    expect(finish.code, finish.out).toBe(0);
    await waitFor('the run to finish', () => cluster.coordinator.store.getRun(run.id)!.state === 'finished', 120_000, 250);
    const done = cluster.coordinator.store.getRun(run.id)!;
    expect(done.proposals).toBeLessThan(200);
    expect(cluster.coordinator.store.getChampion(run.id)).not.toBeNull();
    const list = await cli('runs');
    expect(list.out).toContain(run.id);
    expect(list.out).toContain('finished');
    // a finished run cannot be paused: the coordinator says why
    const refused = await cli('pause', '--run', run.id);
    expect(refused.code).toBe(1);
    expect(refused.out).toMatch(/cannot pause run .* while it is finished/);
    // The submitted genome was recorded as a step the algorithm was not asked about; the pause changed
    // no decision: the search replays exactly from the store.
    const steps = cluster.coordinator.store.searchSteps(run.id);
    expect(steps.filter((s) => s.kind === 'submit')).toHaveLength(1);
    expect(replayRun(cluster.coordinator.store, run.id)).toMatchObject({ agree: true, skipped: 1, disagreement: null });
  }, 180_000);
});
