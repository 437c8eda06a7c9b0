import * as tf from '@tensorflow/tfjs';
import { beforeAll, describe, expect, it } from 'vitest';
import { GENOME_SCHEMA_VERSION, type DataShape, type Genome } from '@netbreeder/shared-types';
import { initBackend } from './backend.js';
import { expectSameStep, oneTrainingStep } from './test-fixtures.js';

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

beforeAll(async () => {
  await initBackend({ prefer: ['wasm'] });
});

describe('one training step of a small CNN', () => {
  it('has the same loss and gradients on wasm as on the cpu backend (reference)', async () => {
    const ref = await oneTrainingStep(GENOME, DATA, 'cpu');
    const got = await oneTrainingStep(GENOME, DATA, 'wasm');
    await tf.setBackend('wasm');
    const names = expectSameStep(got, ref, TOLERANCE);
    expect(names.length).toBeGreaterThanOrEqual(12); // kernels and biases of 4 convs, bn gamma/beta, head
  });
});
