import { writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { DatasetError, parseRunConfig, type RunRecord } from '@netbreeder/coordinator';
import { TestCluster, waitFor } from './support/harness.js';

/**
 * A dataset larger than a worker's memory cap is refused twice over: by the coordinator when the
 * run's `maxDatasetMb` is below the shard size, and by a worker whose `--memory-cap` is below it,
 * before it decodes the shard, with a do-not-retry error that says both sizes.
 */
describe('datasets above the memory cap', () => {
  let cluster: TestCluster;

  beforeAll(async () => {
    cluster = await TestCluster.start('memcap');
  });

  afterAll(async () => {
    await cluster?.stop();
  });

  // 4 × 500 demo tiles: 1,700 training and validation samples × (256 + 1) × 4 bytes ≈ 1.7 MiB.
  const config = (maxDatasetMb: number) =>
    parseRunConfig({ seed: 3, maxDatasetMb, dataset: { kind: 'demo-tiles', samplesPerClass: 500, seed: 3 }, budget: { maxEvaluations: 1, maxMinutes: 5 }, evaluation: { maxAttempts: 2 } });

  it('is refused by the coordinator under maxDatasetMb, with nothing stored', async () => {
    const err = (await cluster.coordinator.startRun(config(1)).catch((e: unknown) => e)) as DatasetError;
    expect(err).toBeInstanceOf(DatasetError);
    expect(err.code).toBe('NB_DATASET_TOO_LARGE');
    expect(err.message).toMatch(/1\.7 MiB/);
    expect(err.message).toContain('maxDatasetMb of 1 MiB');
    expect(cluster.coordinator.store.listRuns()).toEqual([]);
  });

  it('is refused by a worker whose --memory-cap is smaller, without retrying', async () => {
    // The smallest cap a worker accepts is 64 MiB: an IDX file of 90,000 flat samples of 256 bytes
    // gives 76,500 training and validation samples × 257 × 4 bytes = 75.0 MiB of shard.
    const count = 90_000;
    const header = Buffer.alloc(12);
    header.writeUInt32BE(0x00000802, 0);
    header.writeUInt32BE(count, 4);
    header.writeUInt32BE(256, 8);
    const body = Buffer.alloc(count * 256);
    for (let i = 0; i < body.length; i++) body[i] = (Math.floor(i / 256) * 31 + (i % 256) * 7) & 255;
    const labels = Buffer.alloc(8 + count);
    labels.writeUInt32BE(0x00000801, 0);
    labels.writeUInt32BE(count, 4);
    for (let i = 0; i < count; i++) labels[8 + i] = i % 3;
    await writeFile(join(cluster.dataDir, 'big-idx2'), Buffer.concat([header, body]));
    await writeFile(join(cluster.dataDir, 'big-idx1'), labels);
    const run: RunRecord = await cluster.coordinator.startRun(
      parseRunConfig({ seed: 3, dataset: { kind: 'idx', images: join(cluster.dataDir, 'big-idx2'), labels: join(cluster.dataDir, 'big-idx1') }, budget: { maxEvaluations: 1, maxMinutes: 5 }, evaluation: { maxAttempts: 2 } }),
    );
    cluster.spawnWorker('small', ['--memory-cap', '64']);
    const failed = await waitFor(
      'the evaluation to fail on the small worker',
      () => cluster.coordinator.store.evaluations(run.id).find((e) => e.state === 'failed') ?? null,
      120_000,
      250,
    ).catch((err: Error) => {
      throw new Error(`${err.message}\nworker log:\n${cluster.workerLogs.slice(-20).join('')}`);
    });
    expect(failed.error).toMatch(/training shard is 75\.0 MiB decoded, above this worker's memory cap of 64 MiB/);
    // Marked do-not-retry: the attempt is not reissued.
    await new Promise((r) => setTimeout(r, 1500));
    expect(cluster.coordinator.store.evaluations(run.id).filter((e) => e.seq === failed.seq).length).toBe(1);
  });
});
