import type { ChildProcess } from 'node:child_process';
import { createHash } from 'node:crypto';
import { readdir, readFile, writeFile } from 'node:fs/promises';
import { afterAll, describe, expect, it } from 'vitest';
import { parseRunConfig } from '@netbreeder/coordinator';
import { defaultSearchSpace, encodeCheckpoint, type EvaluationJob, type EvaluationResult } from '@netbreeder/shared-types';
import { TrainingProcess } from '@netbreeder/worker';
import { TestCluster, waitFor } from '../support/harness.js';
import { signalTree } from '../support/processes.js';
import { FAULT_LOCK_MS, FAULT_STALLED_CHECK_MS, faultWorkerArgs } from '../support/fault-run.js';

/**
 * Training checkpoints through the real coordinator, queue and worker processes: a worker killed
 * (SIGKILL) after uploading a checkpoint leaves its job to a worker that resumes at that epoch,
 * and a checkpoint that was corrupted on upload or on the coordinator's disk makes the next worker
 * train cleanly from epoch 0.
 *
 * Tolerance 0: every training here runs on the same backend (wasm) with the same seed, and a
 * resumed training restores every piece of state (weights, optimizer slots and step count, sample
 * order, shuffling and dropout random sources), so it runs the same kernels on the same values in
 * the same order as an uninterrupted one: its validation loss and accuracy must be bit-identical.
 */
const config = (seed: number) =>
  parseRunConfig({
    name: `checkpoints ${seed}`,
    seed,
    dataset: { kind: 'demo-tiles', samplesPerClass: 300, seed },
    // No weight inheritance: a search training's final checkpoint would then be kept for children.
    search: { algorithm: 'aging-evolution', populationSize: 4, sampleSize: 2, weightInheritance: false },
    budget: { maxEvaluations: 1, maxMinutes: 10 },
    evaluation: { maxSeconds: 120, maxAttempts: 4, checkpointEveryEpochs: 1 },
    champion: { epochs: 1, maxSeconds: 60, topK: 1 },
    // 12 epochs of about 0.3 to 1 s each here: long enough that a kill lands mid-training.
    searchSpace: { ...defaultSearchSpace(), epochs: { min: 12, max: 12 }, maxFlops: 1_000_000, filters: { min: 4, max: 8 }, units: { min: 8, max: 32 } },
  });

describe('checkpoints and resume after a lost worker', () => {
  let cluster: TestCluster;
  const reference = new TrainingProcess();
  afterAll(async () => {
    await reference.close();
    await cluster?.stop();
  });

  const store = () => cluster.coordinator.store;
  const procs = new Map<string, ChildProcess>();
  const spawn = (id: string, env: NodeJS.ProcessEnv = {}) => {
    const w = cluster.spawnWorker(id, faultWorkerArgs(), env);
    procs.set(id, w);
    return w;
  };
  const alive = (w: ChildProcess) => w.exitCode === null && w.signalCode === null;
  const kill = (w: ChildProcess) => signalTree(w.pid!, 'SIGKILL');
  const latestEpoch = (runId: string) => store().latestCheckpoint(runId, 0)?.epoch ?? 0;
  const doneAttempt = (runId: string) => store().evaluations(runId).find((e) => e.kind === 'search' && e.state === 'done');
  /** The same job trained without interruption, in a training child of this process (same backend). */
  const uninterrupted = async (job: EvaluationJob, shardPath: string) =>
    reference.train({ genome: job.genome, data: { inputShape: job.dataset.inputShape, numClasses: job.dataset.numClasses }, shardPath, splits: 'train', budget: job.budget, seed: job.seed });
  const expectSameScores = (got: EvaluationResult, want: { valLoss: number | null; valAccuracy: number | null }) => {
    expect(got.valLoss).toBe(want.valLoss);
    expect(got.valAccuracy).toBe(want.valAccuracy);
  };
  /** Ends the run (its champion phase is of no interest here) so the next one can start. */
  const stopRun = async (runId: string) => {
    if (['searching', 'paused', 'training-champion'].includes(store().getRun(runId)!.state)) await cluster.coordinator.manager.control(runId, 'stop').catch(() => undefined);
  };

  it('a job whose worker is killed after a checkpoint resumes there, again after a reissue, and ends as an uninterrupted training', async () => {
    cluster = await TestCluster.start('ckpt', { lockDurationMs: FAULT_LOCK_MS, stalledIntervalMs: FAULT_STALLED_CHECK_MS });
    const first = spawn('first');
    await cluster.waitForReadyWorkers(1);
    const run = await cluster.coordinator.startRun(config(31));
    await waitFor('a first checkpoint', () => latestEpoch(run.id) >= 1, 90_000, 50);
    kill(first);
    await new Promise((r) => setTimeout(r, 500)); // an upload cut off by the kill is refused or never lands
    const atFirstKill = latestEpoch(run.id);
    const shaAtFirstKill = store().latestCheckpoint(run.id, 0)!.sha256;
    expect(store().evaluations(run.id).some((e) => e.state === 'done')).toBe(false); // killed mid-training

    // The stalled job goes back to the queue as it is; the next worker asks for the latest checkpoint.
    const second = spawn('second');
    await waitFor('the second worker to upload a later checkpoint', () => latestEpoch(run.id) > atFirstKill, 120_000, 50);
    kill(second);
    await new Promise((r) => setTimeout(r, 500));
    const atSecondKill = latestEpoch(run.id);

    // Stalled twice: the queue fails the job and the coordinator reissues it as attempt 2, carrying the checkpoint.
    spawn('third');
    const done = await waitFor('the evaluation to be done', () => doneAttempt(run.id), 150_000, 200);
    const attempts = store().evaluations(run.id).filter((e) => e.kind === 'search');
    expect(attempts.map((e) => [e.attempt, e.state])).toEqual([[1, 'failed'], [2, 'done']]);
    expect(done.job.resume?.epoch).toBe(atSecondKill);
    expect(done.result!.workerId).toBe('third');
    expect(done.result!.start).toMatchObject({ kind: 'resumed', fromEpoch: atSecondKill, checkpointSha256: done.job.resume!.sha256, note: null });
    expect(done.result!.history.map((h) => h.epoch)).toEqual(Array.from({ length: 12 }, (_, i) => i + 1));
    // The second worker took the job as it was (attempt 1) and was offered the first kill's checkpoint (its log says so).
    expect(cluster.workerLogs.filter((l) => l.startsWith('[second]')).join('')).toContain(`"offered":"resumed ${shaAtFirstKill.slice(0, 12)} at epoch ${atFirstKill}"`);

    const whole = await uninterrupted(done.job, run.dataset.shardPath);
    expectSameScores(done.result!, whole);
    process.stdout.write(`resume: killed after epoch ${atFirstKill}, then ${atSecondKill}; resumed result val loss ${done.result!.valLoss} = uninterrupted ${whole.valLoss}\n`);
    await stopRun(run.id);
  }, 300_000);

  it('a checkpoint whose download no longer matches its hash makes the next worker train from epoch 0', async () => {
    const run = await cluster.coordinator.startRun(config(32));
    const trainer = await waitFor('a worker to train the job', () => store().listWorkers().find((w) => w.heartbeat.currentEvaluationId?.startsWith(`${run.id}-s0`)), 60_000, 50);
    await waitFor('a first checkpoint', () => latestEpoch(run.id) >= 1, 90_000, 50);
    // Killed first, so that the checkpoint corrupted below stays the latest: a later upload would
    // be offered to the next worker instead.
    kill(procs.get(trainer.heartbeat.workerId)!);
    await new Promise((r) => setTimeout(r, 500));
    const held = store().latestCheckpoint(run.id, 0)!;
    const bytes = await readFile(held.path);
    bytes[bytes.length - 3] = bytes[bytes.length - 3]! ^ 0x40; // a bit flipped on the coordinator's disk
    await writeFile(held.path, bytes);
    spawn('after-bad-download');
    const done = await waitFor('the evaluation to be done', () => doneAttempt(run.id), 150_000, 200);
    expect(done.result!.workerId).toBe('after-bad-download');
    expect(done.result!.start!.kind).toBe('fresh');
    expect(done.result!.start!.fromEpoch).toBe(0);
    expect(done.result!.start!.note).toMatch(/has sha256 [0-9a-f]{12}…, not [0-9a-f]{12}…; trained from epoch 0/);
    expectSameScores(done.result!, await uninterrupted(done.job, run.dataset.shardPath));
    await stopRun(run.id);
  }, 300_000);

  it('a corrupted checkpoint upload is refused by its hash, changes nothing, and the job restarts cleanly', async () => {
    // Refused over plain HTTP: a body that is not what its name says, with and without the join token.
    const good = new TextEncoder().encode('not the bytes named');
    const claimed = createHash('sha256').update('other bytes').digest('hex');
    const put = (token: string | null) =>
      fetch(`${cluster.coordinator.url}/checkpoints/${claimed}`, { method: 'PUT', headers: { 'content-type': 'application/octet-stream', ...(token ? { authorization: `Bearer ${token}` } : {}) }, body: good });
    expect((await put(null)).status).toBe(401);
    const refused = await put(cluster.coordinator.secrets.joinToken);
    expect(refused.status).toBe(400);
    expect(((await refused.json()) as { error: { code: string } }).error.code).toBe('NB_CHECKPOINT_HASH_MISMATCH');
    expect(store().checkpointBySha(claimed)).toBeNull();
    // Whole but not a checkpoint, and a checkpoint of no evaluation this coordinator waits for: refused too.
    const putBytes = async (body: Uint8Array) => {
      const sha = createHash('sha256').update(body).digest('hex');
      const res = await fetch(`${cluster.coordinator.url}/checkpoints/${sha}`, { method: 'PUT', headers: { 'content-type': 'application/octet-stream', authorization: `Bearer ${cluster.coordinator.secrets.joinToken}` }, body });
      return { status: res.status, code: ((await res.json()) as { error?: { code: string } }).error?.code, sha };
    };
    expect(await putBytes(good)).toMatchObject({ status: 400, code: 'NB_BAD_CHECKPOINT' });
    const stray = encodeCheckpoint(
      { runId: 'rnone', evaluationId: 'rnone-s0-a1', genomeHash: 'a'.repeat(64), seed: 1, epoch: 1, final: false, backend: 'wasm', optimizer: 'adam', rng: { shuffle: [1, 2, 3, 4], dropout: [] }, samplesSeen: 1, stepSeconds: 0, history: [] },
      [{ group: 'weight', name: 'w', shape: [1], values: Float32Array.of(0) }],
    );
    const strayAnswer = await putBytes(stray);
    expect(strayAnswer).toMatchObject({ status: 409, code: 'NB_CHECKPOINT_REFUSED' });
    expect(store().checkpointBySha(strayAnswer.sha)).toBeNull();

    // A worker whose every upload is corrupted after hashing (test-only fault mode, like a PC with faulty memory).
    for (const w of procs.values()) if (alive(w)) kill(w);
    await waitFor('no live workers', () => ![...procs.values()].some(alive), 20_000);
    const liar = spawn('corrupting', { NETBREEDER_TEST_CORRUPT_CHECKPOINT_UPLOADS: '1' });
    await waitFor('the corrupting worker to be ready', () => store().listWorkers().some((w) => w.heartbeat.workerId === 'corrupting' && w.heartbeat.state === 'idle'), 60_000);
    const refusalsBefore = store().countEvents('checkpoint-refused', null);
    const run = await cluster.coordinator.startRun(config(33));
    await waitFor('two refused uploads', () => store().countEvents('checkpoint-refused', null) >= refusalsBefore + 2, 90_000, 50);
    kill(liar);
    expect(store().latestCheckpoint(run.id, 0)).toBeNull();
    const files = await readdir(cluster.coordinator.manager.checkpoints.dir).catch(() => []);
    expect(files.filter((f) => f.endsWith('.nbck'))).toEqual([]); // nothing of the refused uploads was kept (earlier runs' files were deleted when their evaluations finished)

    spawn('after-bad-upload');
    const done = await waitFor('the evaluation to be done', () => doneAttempt(run.id), 150_000, 200);
    expect(done.result!.workerId).toBe('after-bad-upload');
    expect(done.result!.start).toMatchObject({ kind: 'fresh', fromEpoch: 0, checkpointSha256: null, note: null });
    expectSameScores(done.result!, await uninterrupted(done.job, run.dataset.shardPath));
    await stopRun(run.id);
  }, 300_000);
});
