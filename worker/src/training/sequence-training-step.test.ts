import * as tf from '@tensorflow/tfjs';
import { beforeAll, describe, expect, it } from 'vitest';
import type { DataShape, Genome } from '@netbreeder/shared-types';
import { initBackend } from './backend.js';
import { buildModel } from './build-model.js';
import { crossEntropy } from './evaluate-model.js';
import { syntheticSamples } from './synthetic-samples.js';
import { conv1dGenome, gruGenome, lstmGenome, sequenceGraphGenome } from './sequence-genomes.js';

// Reference: the TensorFlow.js cpu backend (the library's reference implementation). One whole
// training step (loss and the gradient of every trainable weight, via tf.variableGrads) of each
// sequence genome must agree between wasm, with our registered kernels, and cpu within 1e-4
// relative error (max |wasm − cpu| / max |cpu| per weight), as for the image layers.
const TOLERANCE = 1e-4;

const DATA: DataShape = { inputShape: [12, 3], numClasses: 3 };

async function step(genome: Genome, backend: 'cpu' | 'wasm') {
  await tf.setBackend(backend);
  const samples = syntheticSamples(DATA, 8, 5);
  const model = buildModel({ ...genome, training: { ...genome.training, weightDecay: 0.001 } }, DATA, 21);
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

const genomes: Array<[string, Genome]> = [
  ['lstm → lstm → dense', lstmGenome(5)],
  ['gru → dropout', gruGenome(6)],
  ['conv1d, batch norm, max pool, strided valid conv1d, global average pool', conv1dGenome()],
  ['dilated conv1d, add, gru sequence, concat, average pool, motif, global max pool', sequenceGraphGenome()],
];

describe('one training step of a sequence genome', () => {
  for (const [name, genome] of genomes) {
    it(`${name}: same loss and gradients on wasm as on the cpu backend (reference)`, async () => {
      const ref = await step(genome, 'cpu');
      const got = await step(genome, 'wasm');
      await tf.setBackend('wasm');
      expect(Math.abs(got.loss - ref.loss) / ref.loss).toBeLessThan(TOLERANCE);
      const names = Object.keys(ref.grads).sort();
      expect(Object.keys(got.grads).sort()).toEqual(names);
      for (const weight of names) {
        const a = got.grads[weight]!;
        const b = ref.grads[weight]!;
        let diff = 0;
        let scale = 0;
        for (let i = 0; i < b.length; i++) {
          diff = Math.max(diff, Math.abs(a[i]! - b[i]!));
          scale = Math.max(scale, Math.abs(b[i]!));
        }
        // A conv bias feeding batch norm has a gradient of exactly zero in theory; compare absolutely there.
        if (scale < 1e-6) expect(diff, weight).toBeLessThan(1e-6);
        else expect(diff / scale, weight).toBeLessThan(TOLERANCE);
      }
    });
  }
});
