import * as tf from '@tensorflow/tfjs';
import { beforeAll, describe, expect, it } from 'vitest';
import type { DataShape, Genome } from '@netbreeder/shared-types';
import { initBackend } from './backend.js';
import { chainGenome } from './reference-genomes.js';
import { conv1dGenome, gruGenome, lstmGenome } from './sequence-genomes.js';
import { syntheticSamples } from './synthetic-samples.js';
import { trainGenome } from './train-genome.js';
import { evaluateModel } from './evaluate-model.js';
import { loadModelFromMessage } from './model-artifacts.js';

// A short real training of each sequence kind with the real trainGenome, on the wasm backend (with
// our gradient kernels) and on the cpu backend: the invented task (a bright time step or channel
// per class, under noise) must be learnt, the training loss falling and validation accuracy well
// above chance (0.25).
const SENSOR: DataShape = { inputShape: [16, 4], numClasses: 4 };
const train = syntheticSamples(SENSOR, 256, 1);
const val = syntheticSamples(SENSOR, 128, 2);

// Epochs per genome: two stacked LSTMs need more steps than one GRU or a convolution.
const genomes: Array<[string, Genome, number?]> = [
  ['lstm', lstmGenome(12), 8],
  ['gru', gruGenome(12)],
  ['conv1d', conv1dGenome()],
  ['dilated conv1d', chainGenome([{ id: 'c', kind: 'conv1d', filters: 8, kernelSize: 3, strides: 1, dilation: 2, padding: 'same', activation: 'relu' }, { id: 'g', kind: 'global-max-pool' }], { learningRate: 0.01, batchSize: 32 })],
];

beforeAll(async () => {
  await initBackend({ prefer: ['wasm'] });
});

describe('trainGenome on sequences', () => {
  for (const backend of ['wasm', 'cpu'] as const)
    for (const [name, genome, epochs = 4] of genomes)
      it(`${name} on ${backend}: the training loss falls and validation accuracy is well above chance`, async () => {
        await tf.setBackend(backend);
        try {
          const out = await trainGenome({ genome, data: SENSOR, train, val, budget: { epochs, maxSeconds: 60 }, seed: 3 });
          expect(out.backend).toBe(backend);
          expect(out.epochsRun).toBe(epochs);
          expect(out.history.at(-1)!.trainLoss).toBeLessThan(out.history[0]!.trainLoss);
          expect(out.valAccuracy).toBeGreaterThan(0.6);
        } finally {
          await tf.setBackend('wasm');
        }
      });

  it('exports trained dilated conv1d, lstm and gru models that a plain TensorFlow.js loader reads back and that score the same', async () => {
    const g = chainGenome([
      { id: 'c', kind: 'conv1d', filters: 6, kernelSize: 3, strides: 1, dilation: 2, padding: 'same', activation: 'relu' },
      { id: 'l', kind: 'lstm', units: 5, returnSequences: true },
      { id: 'r', kind: 'gru', units: 5, returnSequences: false },
    ], { learningRate: 0.01, batchSize: 32 });
    const out = await trainGenome({ genome: g, data: SENSOR, train, val, budget: { epochs: 1, maxSeconds: 60 }, seed: 4, exportModel: true });
    const model = await loadModelFromMessage(out.model!);
    try {
      expect(model.getLayer('c').getConfig()['dilationRate']).toEqual([2]);
      expect(evaluateModel(model, val).accuracy).toBeCloseTo(out.valAccuracy!, 10);
    } finally {
      model.dispose();
    }
  });
});
