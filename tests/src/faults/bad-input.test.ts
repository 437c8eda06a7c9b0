import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Queue, Worker } from 'bullmq';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { EVALUATION_RESULT_VERSION, defaultSearchSpace, type EvaluationJob, type EvaluationResult } from '@netbreeder/shared-types';
import { openRedis } from '@netbreeder/worker';
import { parseRunConfig, type RunRecord, type RunStore } from '@netbreeder/coordinator';
import { REDIS_URL, TestCluster, waitFor } from '../support/harness.js';
import { spawnCli } from '../support/processes.js';

/**
 * Every kind of bad input the coordinator and workers can meet, each sent for real (through the
 * queue, over HTTP, from a run file), and each time the store must be unchanged apart from the
 * logged rejection.
 */

/**
 * Everything in the store that a rejection must not change: the run (with the search's state),
 * its evaluations and genomes, its champion. The event log, where rejections go, and the worker
 * list, which a worker joining changes, are checked separately.
 */
function storeState(store: RunStore, runId: string) {
  const evaluations = store.evaluations(runId);
  return JSON.stringify({
    run: store.getRun(runId),
    evaluations,
    genomes: [...new Set(evaluations.map((e) => e.genomeHash))].map((h) => store.getGenome(h)),
    champion: store.getChampion(runId),
  });
}

const goodResult = (job: EvaluationJob): EvaluationResult => ({
  schemaVersion: EVALUATION_RESULT_VERSION, evaluationId: job.evaluationId, workerId: 'rogue', backend: 'cpu', valAccuracy: 0.5, valLoss: 1.2, trainLoss: 1.1,
  trainAccuracy: 0.5, paramCount: 1, flops: 1, epochsRun: 1, samplesSeen: 10, trainSeconds: 0.1, samplesPerSecond: 100, peakRssBytes: 1, stoppedBy: 'epochs', history: [],
});

describe('bad input is refused with a clear reason and changes nothing', () => {
  let cluster: TestCluster;
  let run: RunRecord;
  let rogue: Worker;
  const ROGUE_TOKEN = 'rogue-lock-token';

  beforeAll(async () => {
    cluster = await TestCluster.start('bad-input');
    const config = parseRunConfig({
      name: 'bad input',
      seed: 3,
      dataset: { kind: 'demo-tiles', samplesPerClass: 20, seed: 3 },
      search: { populationSize: 4, sampleSize: 2 },
      budget: { maxEvaluations: 50, maxMinutes: 30 },
      evaluation: { maxSeconds: 10, maxAttempts: 20 },
      searchSpace: defaultSearchSpace(),
    });
    run = await cluster.coordinator.startRun(config);
    await cluster.coordinator.manager.control(run.id, 'pause'); // nothing new is queued while we poke at it
    // A rogue worker in this process: a real BullMQ worker, fetching jobs by hand, that returns
    // whatever each test says.
    rogue = new Worker('evaluations', null, { connection: openRedis(REDIS_URL), prefix: cluster.prefix, autorun: false, lockDuration: 10_000 });
  });

  /** Takes the next job off the queue and completes it with `make(job)` as its return value. */
  async function deliver(make: (job: EvaluationJob) => unknown): Promise<string> {
    const job = await waitFor('a job to take', () => rogue.getNextJob(ROGUE_TOKEN, { block: false }), 20_000, 100);
    await job.moveToCompleted(make(job.data as EvaluationJob), ROGUE_TOKEN, false);
    return job.id!;
  }

  afterAll(async () => {
    await rogue?.close(true);
    await cluster?.stop();
  });

  const rejections = () => cluster.coordinator.store.events(run.id, 'rejected-result').length;

  it.each([
    ['a NaN accuracy (JSON turns it into null)', (j: EvaluationJob) => ({ ...goodResult(j), valAccuracy: Number.NaN })],
    ['an accuracy above 1', (j: EvaluationJob) => ({ ...goodResult(j), valAccuracy: 1.5 })],
    ['a negative loss', (j: EvaluationJob) => ({ ...goodResult(j), valLoss: -3 })],
    ['wrong types', (j: EvaluationJob) => ({ ...goodResult(j), paramCount: 'many', history: 'none' })],
    ['another evaluation id in the body', (j: EvaluationJob) => ({ ...goodResult(j), evaluationId: `${j.evaluationId}x` })],
    ['an unknown field', (j: EvaluationJob) => ({ ...goodResult(j), bonus: true })],
    ['no result at all', () => undefined],
    ['a string', () => 'done!'],
  ])('rejects a result with %s and puts the job back', async (_what, make) => {
    const before = storeState(cluster.coordinator.store, run.id);
    const rejected = rejections();
    const id = await deliver(make);
    await waitFor('the rejection', () => rejections() === rejected + 1, 20_000, 100);
    await waitFor('the job to be back in the queue', async () => ['waiting', 'prioritized'].includes(await cluster.coordinator.queue.jobState(id)), 5000, 100);
    expect(storeState(cluster.coordinator.store, run.id)).toBe(before);
  });

  it('has each refused result in the decision log, with its reason', () => {
    const refused = cluster.coordinator.store.searchSteps(run.id).filter((s) => s.kind === 'reject').map((s) => s.decisions[0]!);
    expect(refused).toHaveLength(rejections());
    for (const d of refused) expect(d).toMatchObject({ kind: 'rejected', subject: 'result', version: 1 });
    expect(refused.map((d) => (d.kind === 'rejected' ? d.issues.join(' ') : '')).join('\n')).toContain('names evaluation');
  });

  it('records a good result once, and ignores the same result delivered again', async () => {
    const id = await deliver(goodResult);
    await waitFor('the good result', () => cluster.coordinator.store.counts(run.id).done === 1, 20_000, 100);
    await waitFor('the job to leave Redis', async () => !(await cluster.coordinator.queue.has(id)), 5000, 100);
    const before = storeState(cluster.coordinator.store, run.id);
    // A late duplicate: the same job id again, this time with a different score.
    await cluster.coordinator.queue.add(cluster.coordinator.store.getEvaluation(id)!.job);
    let again = '';
    while (again !== id) again = await deliver((j) => (j.evaluationId === id ? { ...goodResult(j), valAccuracy: 0.99 } : undefined));
    await waitFor('the duplicate to be dropped', async () => !(await cluster.coordinator.queue.has(id)), 20_000, 100);
    expect(storeState(cluster.coordinator.store, run.id)).toBe(before);
    expect(cluster.coordinator.store.getEvaluation(id)!.valAccuracy).toBe(0.5);
  });

  it.each([
    ['a cycle', { schemaVersion: 1, nodes: [{ id: 'a', kind: 'dropout', inputs: ['b'], rate: 0.1 }, { id: 'b', kind: 'dropout', inputs: ['a'], rate: 0.1 }], output: 'a' }, 'cycle'],
    ['an unknown layer kind', { schemaVersion: 1, nodes: [{ id: 'a', kind: 'quantum', inputs: ['input'] }], output: 'a' }, '/nodes/0'],
    ['a shape mismatch', { schemaVersion: 1, nodes: [{ id: 'a', kind: 'dense', inputs: ['input'], units: 8, activation: 'relu' }], output: 'a' }, 'dense needs a flat input'],
    ['too many parameters', { schemaVersion: 1, nodes: [{ id: 'f', kind: 'flatten', inputs: ['input'] }, { id: 'a', kind: 'dense', inputs: ['f'], units: 256, activation: 'relu' }, { id: 'b', kind: 'dense', inputs: ['a'], units: 256, activation: 'relu' }, { id: 'c', kind: 'dense', inputs: ['b'], units: 256, activation: 'relu' }, { id: 'd', kind: 'dense', inputs: ['c'], units: 256, activation: 'relu' }], output: 'd' }, 'above the cap'],
    ['too many FLOPs', { schemaVersion: 1, nodes: [{ id: 'a', kind: 'conv2d', inputs: ['input'], filters: 64, kernelSize: 5, strides: 1, padding: 'same', activation: 'relu' }, { id: 'b', kind: 'conv2d', inputs: ['a'], filters: 64, kernelSize: 5, strides: 1, padding: 'same', activation: 'relu' }, { id: 'g', kind: 'global-avg-pool', inputs: ['b'] }], output: 'g' }, 'FLOPs per sample, above the cap'],
  ])('refuses a submitted genome with %s', async (_what, body, expected) => {
    const genome = { ...body, training: { optimizer: 'adam', learningRate: 0.001, batchSize: 32, weightDecay: 0, epochs: 2 } };
    const before = storeState(cluster.coordinator.store, run.id);
    const res = await fetch(`${cluster.coordinator.url}/runs/${run.id}/genomes`, {
      method: 'POST',
      headers: { 'content-type': 'application/json', authorization: `Bearer ${cluster.coordinator.secrets.adminToken}` },
      body: JSON.stringify({ genome }),
    });
    expect(res.status).toBe(400);
    const answer = (await res.json()) as { error: { code: string; issues: string[] } };
    expect(answer.error.code).toBe('NB_GENOME_REJECTED');
    expect(answer.error.issues.join('\n')).toContain(expected);
    expect(storeState(cluster.coordinator.store, run.id)).toBe(before);
  });

  it('refuses malformed job payloads in a real worker (never retried), and drops results for unknown evaluation ids', async () => {
    await rogue.close();
    const ghostSource = cluster.coordinator.store.pendingEvaluations(run.id)[0]!.job;
    await cluster.coordinator.manager.control(run.id, 'stop'); // its jobs leave the queue
    const queue = new Queue('evaluations', { connection: openRedis(REDIS_URL), prefix: cluster.prefix });
    const before = storeState(cluster.coordinator.store, run.id);
    const dropped = () => cluster.coordinator.store.events(null, 'rejected-result').map((e) => e.detail as { evaluationId: string; reason: string });
    const droppedBefore = dropped().length;
    const worker = cluster.spawnWorker('strict');
    await queue.add('search', { hello: 'world' }, { jobId: 'junk-1' });
    await queue.add('search', { schemaVersion: 1, kind: 'search', evaluationId: 'junk-2', padding: 'x'.repeat(2_000_000) }, { jobId: 'junk-2' });
    // A well-formed job this store never issued (say, from another coordinator's store): trained, then dropped.
    const ghost = { ...ghostSource, evaluationId: 'ghost-s1-a1' };
    await queue.add('search', ghost, { jobId: ghost.evaluationId });
    await waitFor('the three jobs to be dropped', () => dropped().length >= droppedBefore + 3, 90_000, 200);
    await queue.close();
    worker.kill('SIGTERM');
    expect(dropped().slice(droppedBefore).map((d) => d.evaluationId).sort()).toEqual(['ghost-s1-a1', 'junk-1', 'junk-2']);
    expect(dropped().slice(droppedBefore).every((d) => d.reason === 'unknown evaluation id')).toBe(true);
    expect(cluster.workerLogs.join('')).toMatch(/job payload rejected/);
    expect(storeState(cluster.coordinator.store, run.id)).toBe(before);
  });

  it('refuses a malformed run file, naming each bad field, and creates nothing', async () => {
    const dir = await mkdtemp(join(tmpdir(), 'nb-badrun-'));
    const file = join(dir, 'run.json');
    await writeFile(file, JSON.stringify({ dataset: { kind: 'demo-tiles', samplesPerClass: -5 }, search: { algorithm: 'guessing' }, budget: { maxMinutes: 'soon' } }));
    const p = spawnCli(['coordinator', '--run', file, '--data-dir', join(dir, 'data'), '--port', '0'], { NETBREEDER_LOG_LEVEL: 'warn' });
    expect(await p.exited).toBe(1);
    const stderr = p.log.join('');
    for (const field of ['/dataset', '/search/algorithm', '/budget/maxMinutes']) expect(stderr).toContain(field);
    expect(stderr).toContain(file);
    const { existsSync } = await import('node:fs');
    expect(existsSync(join(dir, 'data', 'store.sqlite'))).toBe(false);
    await rm(dir, { recursive: true, force: true });
  });

  it('refuses a run file that asks to mirror images of a dataset without a width axis, naming the field, and stores no run', async () => {
    const dir = await mkdtemp(join(tmpdir(), 'nb-flips-'));
    // An invented kiln log: two readings and the glaze outcome of each firing.
    const rows = ['peak_c,hold_min,outcome', ...Array.from({ length: 40 }, (_, i) => `${1180 + (i % 9) * 7},${20 + (i % 5) * 4},${i % 2 ? 'even' : 'crawled'}`)];
    await writeFile(join(dir, 'kiln.csv'), rows.join('\n'));
    const runsBefore = cluster.coordinator.store.listRuns().length;
    const config = parseRunConfig({ dataset: { kind: 'csv', path: join(dir, 'kiln.csv'), labelColumn: 'outcome' }, searchSpace: { ...defaultSearchSpace(), flips: true } });
    await expect(cluster.coordinator.manager.startRun(config)).rejects.toThrow(/searchSpace\.flips.*no width axis.*remove searchSpace\.flips/);
    expect(cluster.coordinator.store.listRuns()).toHaveLength(runsBefore);
    await rm(dir, { recursive: true, force: true });
  });
});
