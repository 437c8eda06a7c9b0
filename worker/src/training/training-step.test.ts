import * as tf from '@tensorflow/tfjs';
import { beforeAll, describe, expect, it } from 'vitest';
import { GENOME_SCHEMA_VERSION, type DataShape, type Genome } from '@netbreeder/shared-types';
import { initBackend } from './backend.js';
import { buildModel } from './build-model.js';
import { crossEntropy } from './evaluate-model.js';
import { syntheticSamples } from './synthetic-samples.js';

// Reference: the TensorFlow.js cpu backend (the library's reference implementation). One whole
// training step (loss and the gradient of every trainable weight, via tf.variableGrads) of a small
// CNN must agree between wasm, with our registered kernels, and cpu within 1e-4 relative error
// (max |wasm − cpu| / max |cpu| per weight).
const TOLERANCE = 1e-4;

const DATA: DataShape = { inputShape: [12, 12, 2], numClasses: 3 };
const GENOME: Genome = {
  schemaVersion: GENOME_SCHEMA_VERSION,
  nodes: [
    { id: 'c1', kind: 'conv2d', inputs: ['input'], filters: 6, kernelSize: 3, strides: 1, padding: 'same', activation: 'relu' },
    { id: 'c2', kind: 'conv2d', inputs: ['c1'], filters: 8, kernelSize: 5, strides: 2, padding: 'valid', activation: 'linear' },
    { id: 'bn', kind: 'batch-norm', inputs: ['c2'] },
    { id: 'dw', kind: 'depthwise-conv2d', inputs: ['bn'], kernelSize: 3, strides: 1, padding: 'same', depthMultiplier: 2, activation: 'relu' },
    { id: 'side', kind: 'conv2d', inputs: ['bn'], filters: 16, kernelSize: 1, strides: 1, padding: 'same', activation: 'linear' },
    { id: 'sum', kind: 'add', inputs: ['dw', 'side'] },
    { id: 'mp', kind: 'max-pool2d', inputs: ['sum'], poolSize: 2, strides: 1 },
    { id: 'ap', kind: 'avg-pool2d', inputs: ['mp'], poolSize: 2, strides: 2 },
  ] as Genome['nodes'],
  output: 'ap',
  training: { optimizer: 'adam', learningRate: 0.01, batchSize: 8, weightDecay: 0.001, epochs: 1 },
};

async function step(backend: 'cpu' | 'wasm') {
  await tf.setBackend(backend);
  const samples = syntheticSamples(DATA, 8, 5);
  const model = buildModel(GENOME, DATA, 21);
  try {
    return tf.tidy(() => {
      const x = tf.tensor(samples.features, [8, ...DATA.inputShape]);
      const y = tf.oneHot(tf.tensor1d(samples.labels, 'int32'), DATA.numClasses);
      const { value, grads } = tf.variableGrads(() => {
        let loss = crossEntropy(model.apply(x, { training: true }) as tf.Tensor, y);
        for (const p of model.calculateLosses()) loss = tf.add(loss, p) as tf.Scalar;
        return loss;
      });
      return {
        loss: value.dataSync()[0]!,
        grads: Object.fromEntries(Object.entries(grads).map(([k, g]) => [k.replace(/_\d+$/, ''), g.dataSync() as Float32Array])),
      };
    });
  } finally {
    model.dispose();
  }
}

beforeAll(async () => {
  await initBackend({ prefer: ['wasm'] });
});

describe('one training step of a small CNN', () => {
  it('has the same loss and gradients on wasm as on the cpu backend (reference)', async () => {
    const ref = await step('cpu');
    const got = await step('wasm');
    await tf.setBackend('wasm');
    expect(Math.abs(got.loss - ref.loss) / ref.loss).toBeLessThan(TOLERANCE);
    const names = Object.keys(ref.grads).sort();
    expect(Object.keys(got.grads).sort()).toEqual(names);
    expect(names.length).toBeGreaterThanOrEqual(12); // kernels and biases of 4 convs, bn gamma/beta, head
    for (const name of names) {
      const a = got.grads[name]!;
      const b = ref.grads[name]!;
      let diff = 0;
      let scale = 0;
      for (let i = 0; i < b.length; i++) {
        diff = Math.max(diff, Math.abs(a[i]! - b[i]!));
        scale = Math.max(scale, Math.abs(b[i]!));
      }
      // A conv bias feeding batch norm has a gradient of exactly zero in theory (the batch mean
      // cancels it); both backends give rounding noise there, so compare absolutely instead.
      if (scale < 1e-6) expect(diff, name).toBeLessThan(1e-6);
      else expect(diff / scale, name).toBeLessThan(TOLERANCE);
    }
  });
});
