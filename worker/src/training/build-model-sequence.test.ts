import * as tf from '@tensorflow/tfjs';
import { beforeAll, describe, expect, it } from 'vitest';
import { analyzeGenome, type DataShape, type Genome } from '@netbreeder/shared-types';
import { initBackend } from './backend.js';
import { buildModel } from './build-model.js';
import { chainGenome, linearGenome } from './reference-genomes.js';
import { conv1dGenome, gruGenome, lstmGenome, sequenceGraphGenome } from './sequence-genomes.js';

const SENSOR: DataShape = { inputShape: [24, 3], numClasses: 4 };
const DIGIT_ROWS: DataShape = { inputShape: [28, 28], numClasses: 10 };

const cases: Array<[string, Genome, DataShape]> = [
  ['linear on a sequence (head flattens)', linearGenome(), SENSOR],
  ['lstm sequence → lstm last step → dense', lstmGenome(), SENSOR],
  ['lstm of 7 units on 28 × 28 rows', lstmGenome(7), DIGIT_ROWS],
  ['gru last step → dropout', gruGenome(), SENSOR],
  ['gru of 9 units on 28 × 28 rows', gruGenome(9), DIGIT_ROWS],
  ['conv1d stack with batch norm, max pool, strided valid conv, global average pool', conv1dGenome(), SENSOR],
  ['dilated conv1d, add, gru sequence, concat, average pool, repeated motif, global max pool', sequenceGraphGenome(), SENSOR],
  [
    'dilated valid conv1d, flatten, dense; weight decay',
    chainGenome(
      [
        { id: 'c', kind: 'conv1d', filters: 5, kernelSize: 3, strides: 1, dilation: 4, padding: 'valid', activation: 'swish' },
        { id: 'ap', kind: 'avg-pool1d', poolSize: 2, strides: 2 },
        { id: 'f', kind: 'flatten' },
        { id: 'd', kind: 'dense', units: 6, activation: 'relu' },
      ],
      { weightDecay: 0.001 },
    ),
    SENSOR,
  ],
  ['gru sequence → flatten in the head', chainGenome([{ id: 'g', kind: 'gru', units: 4, returnSequences: true }]), SENSOR],
];

beforeAll(async () => {
  await initBackend();
});

describe('buildModel on sequences (time steps × channels)', () => {
  // Reference library: TensorFlow.js's own model.countParams() and layer output shapes must equal analyzeGenome's.
  for (const [name, genome, data] of cases) {
    it(`${name}: countParams() and every layer's output shape equal analyzeGenome's`, () => {
      const analysis = analyzeGenome(genome, data);
      if (!analysis.ok) throw new Error(JSON.stringify(analysis.issues));
      const model = buildModel(genome, data, 1);
      try {
        expect(model.countParams()).toBe(analysis.analysis.params);
        for (const n of analysis.analysis.nodes) {
          if (n.kind === 'repeat' || n.kind === 'head-flatten' || n.kind === 'head-dense') continue;
          expect([n.id, model.getLayer(n.id).outputShape]).toEqual([n.id, [null, ...n.outputShape]]);
        }
        const y = tf.tidy(() => (model.predict(tf.randomNormal([2, ...data.inputShape], 0, 1, 'float32', 5)) as tf.Tensor).sum(-1).arraySync() as number[]);
        for (const s of y) expect(s).toBeCloseTo(1, 5); // softmax rows sum to one
      } finally {
        model.dispose();
      }
    });
  }

  it('seeds the recurrent and convolution initialisers: same seed, same weights', () => {
    const weights = (seed: number) => {
      const model = buildModel(sequenceGraphGenome(), SENSOR, seed);
      const values = model.getWeights().map((w) => Array.from(w.dataSync()));
      model.dispose();
      return values;
    };
    expect(weights(7)).toEqual(weights(7));
    expect(weights(7)).not.toEqual(weights(8));
  });
});
