import * as tf from '@tensorflow/tfjs';
import { beforeAll, describe, it } from 'vitest';
import type { DataShape, Genome } from '@netbreeder/shared-types';
import { initBackend } from './backend.js';
import { expectSameStep, oneTrainingStep } from './test-fixtures.js';
import { conv1dGenome, gruGenome, lstmGenome, sequenceGraphGenome } from './sequence-genomes.js';

// Reference: the TensorFlow.js cpu backend (the library's reference implementation). One whole
// training step (loss and the gradient of every trainable weight, via tf.variableGrads) of each
// sequence genome must agree between wasm, with our registered kernels, and cpu within 1e-4
// relative error (max |wasm − cpu| / max |cpu| per weight), as for the image layers.
const TOLERANCE = 1e-4;

const DATA: DataShape = { inputShape: [12, 3], numClasses: 3 };

beforeAll(async () => {
  await initBackend({ prefer: ['wasm'] });
});

const genomes: Array<[string, Genome]> = [
  ['lstm → lstm → dense', lstmGenome(5)],
  ['gru → dropout', gruGenome(6)],
  ['conv1d, batch norm, max pool, strided valid conv1d, global average pool', conv1dGenome()],
  ['dilated conv1d, add, gru sequence, concat, average pool, motif, global max pool', sequenceGraphGenome()],
];

describe('one training step of a sequence genome', () => {
  for (const [name, genome] of genomes) {
    it(`${name}: same loss and gradients on wasm as on the cpu backend (reference)`, async () => {
      // With weight decay, so the regularisers' gradients are compared too.
      const decayed = { ...genome, training: { ...genome.training, weightDecay: 0.001 } };
      const ref = await oneTrainingStep(decayed, DATA, 'cpu');
      const got = await oneTrainingStep(decayed, DATA, 'wasm');
      await tf.setBackend('wasm');
      expectSameStep(got, ref, TOLERANCE);
    });
  }
});
