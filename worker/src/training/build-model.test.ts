import * as tf from '@tensorflow/tfjs';
import { beforeAll, describe, expect, it } from 'vitest';
import { analyzeGenome, type DataShape, type Genome } from '@netbreeder/shared-types';
import { initBackend } from './backend.js';
import { buildModel } from './build-model.js';
import { InvalidGenomeError } from './errors.js';
import { chainGenome, concatDepthwiseGenome, flatMotifGenome, linearGenome, motifGenome, refCnn, refMlp, refSkipBn } from './reference-genomes.js';
import { planWeightCopy } from './weight-inheritance.js';

const MNIST_FLAT: DataShape = { inputShape: [784], numClasses: 10 };
const MNIST_IMAGE: DataShape = { inputShape: [28, 28, 1], numClasses: 10 };
const TILES: DataShape = { inputShape: [16, 16, 3], numClasses: 4 };

const cases: Array<[string, Genome, DataShape]> = [
  ['linear on flat input', linearGenome(), MNIST_FLAT],
  ['linear on an image (head flattens)', linearGenome(), MNIST_IMAGE],
  ['MLP (ref-mlp)', refMlp(), MNIST_FLAT],
  ['CNN (ref-cnn)', refCnn(), MNIST_IMAGE],
  ['skip/add with batch norm', refSkipBn(), MNIST_IMAGE],
  ['concat of conv and depthwise, dropout, global max pool', concatDepthwiseGenome(), TILES],
  [
    'batch norm on a flat layer, strided valid conv, weight decay',
    chainGenome(
      [
        { id: 'c', kind: 'conv2d', filters: 6, kernelSize: 5, strides: 2, padding: 'valid', activation: 'elu' },
        { id: 'g', kind: 'global-avg-pool' },
        { id: 'bn', kind: 'batch-norm' },
        { id: 'd', kind: 'dense', units: 12, activation: 'selu' },
      ],
      { weightDecay: 0.001 },
    ),
    TILES,
  ],
  ['repeated motifs: a conv cell ×3 and a residual cell ×2', motifGenome(3), TILES],
  ['a repeated motif on flat input: dense → dropout ×3', flatMotifGenome(), MNIST_FLAT],
];

beforeAll(async () => {
  await initBackend();
});

describe('buildModel', () => {
  // Reference library: TensorFlow.js's own model.countParams() must equal our analyzeGenome count.
  for (const [name, genome, data] of cases) {
    it(`${name}: countParams() equals analyzeGenome params, output shape is [batch, classes]`, () => {
      const analysis = analyzeGenome(genome, data);
      if (!analysis.ok) throw new Error(JSON.stringify(analysis.issues));
      const model = buildModel(genome, data, 1);
      try {
        expect(model.countParams()).toBe(analysis.analysis.params);
        expect(model.outputs[0]!.shape).toEqual([null, data.numClasses]);
        const y = tf.tidy(() => (model.predict(tf.zeros([2, ...data.inputShape])) as tf.Tensor).sum(-1).arraySync() as number[]);
        for (const s of y) expect(s).toBeCloseTo(1, 5); // softmax rows sum to one
      } finally {
        model.dispose();
      }
    });
  }

  it('gives the same weights for the same seed and different ones for another seed', () => {
    const weights = (seed: number) => {
      const model = buildModel(refCnn(), MNIST_IMAGE, seed);
      const values = model.getWeights().map((w) => Array.from(w.dataSync()));
      model.dispose();
      return values;
    };
    expect(weights(7)).toEqual(weights(7));
    expect(weights(7)).not.toEqual(weights(8));
  });

  it('puts an L2 penalty of the genome weight decay on kernels', () => {
    const decay = 0.01;
    const model = buildModel(refMlp(), MNIST_FLAT, 3);
    const penalised = buildModel({ ...refMlp(), training: { ...refMlp().training, weightDecay: decay } }, MNIST_FLAT, 3);
    try {
      expect(model.calculateLosses()).toHaveLength(0);
      const penalties = penalised.calculateLosses();
      const total = penalties.reduce((a, p) => a + p.dataSync()[0]!, 0);
      tf.dispose(penalties);
      const kernels = penalised.layers.flatMap((l) => l.getWeights().filter((_, i) => i === 0));
      const expected = decay * kernels.reduce((a, k) => a + tf.tidy(() => k.square().sum().dataSync()[0]!), 0);
      expect(penalties).toHaveLength(3); // two hidden dense layers and the head
      expect(total).toBeCloseTo(expected, 4);
    } finally {
      model.dispose();
      penalised.dispose();
    }
  });

  it('names a repeat\'s layers r.k.node, so a child with one more application inherits the others by name', () => {
    const parent = buildModel(motifGenome(2), TILES, 1);
    const child = buildModel(motifGenome(3), TILES, 1);
    try {
      const names = child.layers.map((l) => l.name);
      expect(names).toEqual(expect.arrayContaining(['body.1.c', 'body.2.bn', 'body.3.act', 'res.1.sum', 'res.2.c']));
      const specs = (m: tf.LayersModel) => m.weights.map((w) => ({ name: w.originalName, shape: w.shape as number[] }));
      const plan = planWeightCopy(specs(child), specs(parent));
      // Every weight but the third application's conv kernel and bias and its four batch-norm weights.
      expect(plan.total - plan.copied).toBe(6);
      expect(specs(child).filter((_, i) => !plan.copies.some(([t]) => t === i)).every((w) => w.name.startsWith('body.3.'))).toBe(true);
    } finally {
      parent.dispose();
      child.dispose();
    }
  });

  it('refuses a genome that does not fit the data shape, saying which node', () => {
    const bad = chainGenome([{ id: 'c', kind: 'conv2d', filters: 2, kernelSize: 3, strides: 1, padding: 'same', activation: 'relu' }]);
    expect(() => buildModel(bad, MNIST_FLAT, 1)).toThrow(InvalidGenomeError);
    expect(() => buildModel(bad, MNIST_FLAT, 1)).toThrow(/c: conv2d needs a spatial input/);
  });
});
