import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { encodeShard, type DataShape, type EpochRecord } from '@netbreeder/shared-types';
import { isRetryable, TrainingAbortedError, TrainingProcessError } from './errors.js';
import { chainGenome, linearGenome } from './reference-genomes.js';
import { syntheticSamples } from './synthetic-samples.js';
import type { ChildTrainRequest } from './training-protocol.js';
import { TrainingProcess } from './training-process.js';

const DATA: DataShape = { inputShape: [6, 6, 1], numClasses: 3 };
const dir = mkdtempSync(join(tmpdir(), 'nb-training-process-'));
const shardPath = join(dir, 'shard.nbs');
const request = (extra: Partial<ChildTrainRequest> = {}): ChildTrainRequest => ({
  genome: linearGenome({ batchSize: 16, learningRate: 0.05 }),
  data: DATA,
  shardPath,
  splits: 'train',
  budget: { epochs: 2, maxSeconds: 30 },
  seed: 3,
  ...extra,
});
const slowGenome = chainGenome([{ id: 'f', kind: 'flatten' }, { id: 'd', kind: 'dense', units: 64, activation: 'relu' }], { batchSize: 1 });

let processUnderTest: TrainingProcess;

beforeAll(() => {
  const shard = { inputShape: [...DATA.inputShape], classNames: ['a', 'b', 'c'], train: syntheticSamples(DATA, 96, 1), val: syntheticSamples(DATA, 48, 2) };
  writeFileSync(shardPath, encodeShard(shard));
  processUnderTest = new TrainingProcess();
});

afterAll(async () => {
  await processUnderTest.close();
  rmSync(dir, { recursive: true, force: true });
});

describe('TrainingProcess (a real child process)', () => {
  it('starts the child, reports its backend and trains a job, streaming epochs', async () => {
    const choice = await processUnderTest.start();
    expect(choice.backend).toBe('wasm');
    expect(processUnderTest.backend()).toBe('wasm');
    expect(processUnderTest.backendReason()).toMatch(/tensorflow unavailable/);
    const epochs: EpochRecord[] = [];
    const outcome = await processUnderTest.train(request(), { onEpoch: (r) => epochs.push(r) });
    expect(epochs.map((e) => e.epoch)).toEqual([1, 2]);
    expect(outcome.epochsRun).toBe(2);
    expect(outcome.samplesSeen).toBe(2 * 96);
    expect(outcome.valAccuracy).not.toBeNull();
    expect(outcome.history).toEqual(epochs);
  });

  it('trains on train + val without validation and exports the model when asked', async () => {
    const outcome = await processUnderTest.train(request({ splits: 'train+val', exportModel: true, budget: { epochs: 1, maxSeconds: 30 } }));
    expect(outcome.samplesSeen).toBe(96 + 48);
    expect(outcome.valAccuracy).toBeNull();
    expect(outcome.model?.weightDataBase64.length).toBeGreaterThan(0);
  });

  it('holds the first validation samples back when asked: trains on the rest, the whole budget despite patience, and scores the final weights on them', async () => {
    const genome = linearGenome({ batchSize: 16, learningRate: 0.05 });
    const patient = { ...genome, training: { ...genome.training, patience: 1 } };
    const outcome = await processUnderTest.train(request({ genome: patient, splits: 'train+val', selectionHoldout: 20, exportModel: true, budget: { epochs: 4, maxSeconds: 30 } }));
    expect(outcome.samplesSeen).toBe(4 * (96 + 48 - 20));
    expect(outcome.epochsRun).toBe(4);
    expect(outcome.valAccuracy).toBe(outcome.history.at(-1)!.valAccuracy);
    expect(outcome.valAccuracy).not.toBeNull();
  });

  it('gives the same result as in-process determinism promises: same job, same scores', async () => {
    const a = await processUnderTest.train(request());
    const b = await processUnderTest.train(request());
    expect(b.valLoss).toBe(a.valLoss);
  });

  it('passes a do-not-retry error through with its code', async () => {
    const big = chainGenome([{ id: 'f', kind: 'flatten' }, { id: 'd', kind: 'dense', units: 4096, activation: 'relu' }, { id: 'e', kind: 'dense', units: 4096, activation: 'relu' }]);
    const err = await processUnderTest.train(request({ genome: big, memoryCapMb: 16 })).catch((e: unknown) => e);
    expect(isRetryable(err)).toBe(false);
    expect((err as { code: string }).code).toBe('NB_GENOME_TOO_LARGE');
  });

  it('rejects a job whose child dies with a retryable error, then re-forks for the next job', async () => {
    const running = processUnderTest.train(request({ genome: slowGenome, budget: { epochs: 50, maxSeconds: 30 } }), {
      onEpoch: () => processUnderTest.kill(),
    });
    const err = await running.catch((e: unknown) => e);
    expect(err).toBeInstanceOf(TrainingProcessError);
    expect(isRetryable(err)).toBe(true);
    const outcome = await processUnderTest.train(request({ budget: { epochs: 1, maxSeconds: 30 } }));
    expect(outcome.epochsRun).toBe(1);
  });

  it('cancels a job through its AbortSignal', async () => {
    const controller = new AbortController();
    const running = processUnderTest.train(request({ genome: slowGenome, budget: { epochs: 50, maxSeconds: 30 } }), { signal: controller.signal, onEpoch: () => controller.abort() });
    await expect(running).rejects.toBeInstanceOf(TrainingAbortedError);
  });
});
