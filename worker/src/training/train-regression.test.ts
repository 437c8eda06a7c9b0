import * as tf from '@tensorflow/tfjs';
import { beforeAll, describe, expect, it } from 'vitest';
import { createRandom, createValidator, EvaluationResultSchema, referenceGenome, rmseFromFitness, type DataShape, type LabelledSamples } from '@netbreeder/shared-types';
import { initBackend } from './backend.js';
import { buildModel } from './build-model.js';
import { trainGenome } from './train-genome.js';

/** A seeded table of 4 standardised features and a smooth target: y = 3 + 2·x0 − x1² + 0.5·x2·x3 + noise (sd 0.1). */
function regressionSamples(count: number, seed: number): LabelledSamples & { raw: Float64Array } {
  const r = createRandom(`regression samples ${seed}`);
  const features = new Float32Array(count * 4);
  const raw = new Float64Array(count);
  for (let i = 0; i < count; i++) {
    const x = [0, 1, 2, 3].map(() => r.next() * 2 - 1);
    features.set(x, i * 4);
    raw[i] = 3 + 2 * x[0]! - x[1]! ** 2 + 0.5 * x[2]! * x[3]! + (r.next() - 0.5) * 0.35;
  }
  return { features, labels: new Int32Array(count), count, raw };
}

const train = regressionSamples(600, 1);
const val = regressionSamples(200, 2);
// The target's scaling, fitted on the training split as the importer does.
const mean = train.raw.reduce((a, b) => a + b, 0) / train.count;
const std = Math.sqrt(train.raw.reduce((a, b) => a + (b - mean) ** 2, 0) / train.count);
const standardize = (s: ReturnType<typeof regressionSamples>): LabelledSamples => ({ ...s, targets: Float32Array.from(s.raw, (v) => (v - mean) / std) });
const DATA: DataShape = { inputShape: [4], numClasses: 2, target: { column: 'y', mean, std } };

beforeAll(async () => {
  await initBackend();
});

describe('a regression training', () => {
  it('builds one linear head unit', () => {
    const model = buildModel(referenceGenome(DATA), DATA, 1);
    expect(model.outputs[0]!.shape).toEqual([null, 1]);
    const out = tf.tidy(() => (model.predict(tf.tensor2d([[5, 5, 5, 5]])) as tf.Tensor).dataSync()[0]!);
    // Linear, not a softmax: one output that is not forced into (0, 1].
    expect(Number.isFinite(out)).toBe(true);
    model.dispose();
  });

  it('learns the target with mean squared error and reports validation RMSE, MAE and R² in the target units', async () => {
    const out = await trainGenome({ genome: { ...referenceGenome(DATA), training: { ...referenceGenome(DATA).training, epochs: 30 } }, data: DATA, train: standardize(train), val: standardize(val), budget: { epochs: 30, maxSeconds: 120 }, seed: 4 });
    expect(createValidator('evaluation result', EvaluationResultSchema).check({ ...out, schemaVersion: 1, evaluationId: 'e1', workerId: 'w' })).toBe(true);
    const scores = out.valRegression!;
    // Predicting the training mean scores about the target's standard deviation (common practice: the baseline of any regressor).
    const baseline = Math.sqrt(val.raw.reduce((a, v) => a + (v - mean) ** 2, 0) / val.count);
    expect(scores.rmse).toBeLessThan(0.5 * baseline);
    expect(scores.r2).toBeGreaterThan(0.75);
    expect(scores.mae).toBeLessThanOrEqual(scores.rmse);
    // valAccuracy holds the search fitness 1 / (1 + standardised RMSE) of the same validation scoring.
    expect(rmseFromFitness(out.valAccuracy!) * std).toBeCloseTo(scores.rmse, 4);
    expect(out.valLoss).toBeCloseTo((scores.rmse / std) ** 2, 4);
    expect(out.history.at(-1)!.trainAccuracy).toBeGreaterThan(0.5);
  }, 120_000);

  it('with the Huber loss, a few gross outliers in training pull the network less than with mean squared error', async () => {
    // 30 of 600 training targets moved 8 standard deviations up (a logging slip); validation stays clean.
    const dirty = standardize(train);
    const targets = Float32Array.from(dirty.targets!, (v, i) => (i % 20 === 0 ? v + 8 : v));
    const genome = { ...referenceGenome(DATA), training: { ...referenceGenome(DATA).training, epochs: 20 } };
    const run = (data: DataShape) => trainGenome({ genome, data, train: { ...dirty, targets }, val: standardize(val), budget: { epochs: 20, maxSeconds: 120 }, seed: 4 });
    const squared = await run(DATA);
    const huber = await run({ ...DATA, target: { ...DATA.target!, loss: 'huber' } });
    // The Huber loss is linear beyond its threshold, so outliers weigh less (from memory: Huber 1964, robust estimation).
    expect(huber.valRegression!.rmse).toBeLessThan(squared.valRegression!.rmse);
  }, 180_000);
});
