import * as tf from '@tensorflow/tfjs';
import { beforeAll, describe, expect, it } from 'vitest';
import { createValidator, EvaluationResultSchema, type DataShape, type Genome } from '@netbreeder/shared-types';
import { initBackend } from './backend.js';
import { GenomeTooLargeError, isRetryable } from './errors.js';
import { evaluateModel } from './evaluate-model.js';
import { loadModelFromMessage } from './model-artifacts.js';
import { chainGenome, concatDepthwiseGenome, linearGenome, refSkipBn } from './reference-genomes.js';
import { syntheticSamples } from './synthetic-samples.js';
import { trainGenome, type TrainRequest } from './train-genome.js';

const IMAGE: DataShape = { inputShape: [8, 8, 1], numClasses: 4 };
const train = syntheticSamples(IMAGE, 256, 1);
const val = syntheticSamples(IMAGE, 128, 2);
const smallCnn = (training: Partial<Genome['training']> = {}): Genome =>
  chainGenome(
    [
      { id: 'c1', kind: 'conv2d', filters: 4, kernelSize: 3, strides: 1, padding: 'same', activation: 'relu' },
      { id: 'p1', kind: 'max-pool2d', poolSize: 2, strides: 2 },
      { id: 'drop', kind: 'dropout', rate: 0.2 },
    ],
    { batchSize: 32, learningRate: 0.01, ...training },
  );
const request = (genome: Genome, extra: Partial<TrainRequest> = {}): TrainRequest => ({
  genome,
  data: IMAGE,
  train,
  val,
  budget: { epochs: 3, maxSeconds: 60 },
  seed: 11,
  ...extra,
});
const resultValidator = createValidator('evaluation result', EvaluationResultSchema);

beforeAll(async () => {
  expect((await initBackend()).backend).toBe('wasm');
});

describe('trainGenome', () => {
  it('stops early once the validation loss has not improved for `patience` epochs, and returns the samples it did not use', async () => {
    // Validation labels that disagree with the task: the better the network fits the training
    // split, the higher its validation loss, so it stops after its first epochs.
    const wrong = { ...val, labels: val.labels.map((l) => (l + 1) % IMAGE.numClasses) };
    const budget = { epochs: 15, maxSeconds: 60 };
    const out = await trainGenome(request(smallCnn({ patience: 2, learningRate: 0.02 }), { val: wrong, budget }));
    expect(out.stoppedBy).toBe('patience');
    expect(out.epochsRun).toBeLessThan(15);
    expect(out.samplesSeen).toBe(out.epochsRun * train.count);
    // The last `patience` epochs did not lower the validation loss below its best.
    const losses = out.history.map((h) => h.valLoss!);
    const best = Math.min(...losses);
    expect(losses.slice(-2).every((l) => l >= best)).toBe(true);
    expect(losses.slice(0, -2)).toContain(best);
  });

  it('keeps the weights of its best validation epoch when asked, and reports that epoch', async () => {
    const out = await trainGenome(request(smallCnn({ learningRate: 0.05 }), { budget: { epochs: 6, maxSeconds: 60 }, keepBestWeights: true, exportModel: true }));
    const bestAccuracy = Math.max(...out.history.map((h) => h.valAccuracy!));
    expect(out.valAccuracy).toBe(bestAccuracy);
    expect(out.history[out.bestEpoch! - 1]!.valAccuracy).toBe(bestAccuracy);
    // The exported model is that epoch's: it scores the best accuracy again.
    const model = await loadModelFromMessage(out.model!);
    expect(evaluateModel(model, val).accuracy).toBeCloseTo(bestAccuracy, 10);
    model.dispose();
  });

  it('learns the synthetic task and reports a result that fits the evaluation-result schema', async () => {
    const epochs: number[] = [];
    const outcome = await trainGenome(request(smallCnn(), { onEpoch: (r) => epochs.push(r.epoch) }));
    expect(epochs).toEqual([1, 2, 3]);
    expect(outcome.stoppedBy).toBe('epochs');
    expect(outcome.epochsRun).toBe(3);
    expect(outcome.samplesSeen).toBe(3 * train.count);
    expect(outcome.valAccuracy).toBeGreaterThan(0.6); // chance is 0.25
    expect(outcome.history[2]!.trainLoss).toBeLessThan(outcome.history[0]!.trainLoss);
    expect(outcome.backend).toBe('wasm');
    expect(outcome.peakRssBytes).toBeGreaterThan(0);
    expect(outcome.latencyMsPerSample).toBeGreaterThan(0); // one sample alone, measured after training
    const full = { schemaVersion: 1, evaluationId: 'e1', workerId: 'w1', ...outcome };
    expect(resultValidator.issues(full)).toEqual([]);
  });

  it('gives the same scores for the same genome, seed and backend, and different ones for another seed', async () => {
    const a = await trainGenome(request(concatDepthwiseGenome({ batchSize: 16 }), { budget: { epochs: 2, maxSeconds: 60 } }));
    const b = await trainGenome(request(concatDepthwiseGenome({ batchSize: 16 }), { budget: { epochs: 2, maxSeconds: 60 } }));
    const c = await trainGenome(request(concatDepthwiseGenome({ batchSize: 16 }), { budget: { epochs: 2, maxSeconds: 60 }, seed: 12 }));
    expect(b.valLoss).toBe(a.valLoss);
    expect(b.trainLoss).toBe(a.trainLoss);
    expect(b.history.map((h) => h.valAccuracy)).toEqual(a.history.map((h) => h.valAccuracy));
    expect(c.valLoss).not.toBe(a.valLoss);
    // Batch norm (our kernels on wasm, see channel-batch-norm.ts) is as reproducible.
    const withBatchNorm = () => trainGenome(request(refSkipBn(), { budget: { epochs: 2, maxSeconds: 60 } }));
    const [d, e] = [await withBatchNorm(), await withBatchNorm()];
    expect(e.history.map((h) => [h.trainLoss, h.valLoss])).toEqual(d.history.map((h) => [h.trainLoss, h.valLoss]));
  });

  it('stops at the sample budget and at the wall-time budget, saying which', async () => {
    const bySamples = await trainGenome(request(linearGenome({ batchSize: 50 }), { budget: { epochs: 10, maxSeconds: 60, maxSamples: 120 } }));
    expect(bySamples.stoppedBy).toBe('samples');
    expect(bySamples.samplesSeen).toBe(120);
    expect(bySamples.epochsRun).toBe(1);
    const bySeconds = await trainGenome(request(smallCnn({ batchSize: 8 }), { budget: { epochs: 1000, maxSeconds: 0.3 } }));
    expect(bySeconds.stoppedBy).toBe('seconds');
    expect(bySeconds.epochsRun).toBeLessThan(1000);
    expect(bySeconds.valAccuracy).not.toBeNull();
  });

  it('trains on train + val without validation (champion mode): validation figures are null', async () => {
    const outcome = await trainGenome(request(linearGenome(), { val: null, budget: { epochs: 1, maxSeconds: 60 } }));
    expect(outcome.valAccuracy).toBeNull();
    expect(outcome.valLoss).toBeNull();
    expect(outcome.history[0]!.valAccuracy).toBeNull();
  });

  it('exports a model that reloads with the same predictions', async () => {
    const outcome = await trainGenome(request(refSkipBn(), { data: IMAGE, budget: { epochs: 1, maxSeconds: 60 }, exportModel: true }));
    expect(outcome.model).toBeDefined();
    const model = await loadModelFromMessage(outcome.model!);
    try {
      const scored = evaluateModel(model, val);
      expect(scored.accuracy).toBeCloseTo(outcome.valAccuracy!, 10);
      expect(scored.loss).toBeCloseTo(outcome.valLoss!, 5);
    } finally {
      model.dispose();
    }
  });

  it('refuses before training a genome above the memory cap, with a do-not-retry error', async () => {
    const big = chainGenome([{ id: 'd', kind: 'dense', units: 4096, activation: 'relu' }], { batchSize: 512 });
    const flat: DataShape = { inputShape: [4096], numClasses: 4 };
    const tensors = tf.memory().numTensors;
    const attempt = trainGenome({ ...request(big), data: flat, train: { features: new Float32Array(0), labels: new Int32Array(0), count: 0 }, val: null, memoryCapMb: 64 });
    await expect(attempt).rejects.toBeInstanceOf(GenomeTooLargeError);
    await attempt.catch((err) => expect(isRetryable(err)).toBe(false));
    expect(tf.memory().numTensors).toBe(tensors);
  });

  it('leaks no tensors over 30 trainings of varied genomes', async () => {
    // The dense chain trains by the compiled step (compiled-dense-step.ts), whose heap buffers live as long as one training.
    const denseChain = chainGenome([{ id: 'f', kind: 'flatten' }, { id: 'd', kind: 'dense', units: 24, activation: 'relu' }, { id: 'x', kind: 'dropout', rate: 0.2 }], { batchSize: 16, weightDecay: 0.001 });
    const genomes: Genome[] = [linearGenome({ batchSize: 64 }), denseChain, smallCnn(), concatDepthwiseGenome({ batchSize: 64, optimizer: 'rmsprop' }), refSkipBn(), smallCnn({ optimizer: 'sgd', weightDecay: 0.01 })];
    const heapBytes = () => (tf.engine().backend as unknown as { wasm: { HEAPU8: Uint8Array } }).wasm.HEAPU8.length;
    for (const g of genomes) await trainGenome(request(g, { budget: { epochs: 1, maxSeconds: 10, maxSamples: 64 } })); // warm-up
    const start = tf.memory().numTensors;
    const dataIds = tf.engine().backend.numDataIds();
    const heap = heapBytes();
    for (let i = 0; i < 30; i++) {
      await trainGenome(request(genomes[i % genomes.length]!, { seed: i, budget: { epochs: 1, maxSeconds: 10, maxSamples: 64 }, exportModel: i % 7 === 0 }));
    }
    expect(tf.memory().numTensors).toBe(start);
    expect(tf.engine().backend.numDataIds()).toBe(dataIds);
    // The wasm heap never shrinks, so a leak there (tensors, or the backend's cached convolution
    // operators, which are keyed by filter tensor) would show as growth.
    expect(heapBytes()).toBe(heap);
  });
});
