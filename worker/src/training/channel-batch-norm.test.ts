import * as tf from '@tensorflow/tfjs';
import { beforeAll, describe, expect, it } from 'vitest';
import type { DataShape } from '@netbreeder/shared-types';
import { initBackend } from './backend.js';
import { ChannelBatchNorm } from './channel-batch-norm.js';
import { BATCH_NORM_TRAINING } from './kernels/batch-norm-training.js';
import { randomArray, relativeError } from './kernels/test-arrays.js';
import { chainGenome } from './reference-genomes.js';
import { syntheticSamples } from './synthetic-samples.js';
import { trainGenome } from './train-genome.js';

// Reference: the layers library's own BatchNormalization layer (tf.layers.batchNormalization) on
// the TensorFlow.js cpu backend, the library's reference implementation. Our layer on wasm (our
// two kernels) must agree with it within 1e-4 relative error (max |ours − ref| / max |ref|) in
// training mode: output, moving mean and variance after the step, gradients of input, gamma, beta.
const TOLERANCE = 1e-4;
const MOMENTUM = 0.9;

type Backend = 'cpu' | 'wasm';
type Made = 'ours' | 'library';

const makeLayer = (made: Made, name: string): tf.layers.Layer =>
  made === 'ours' ? new ChannelBatchNorm({ name, momentum: MOMENTUM }) : tf.layers.batchNormalization({ name, axis: -1, momentum: MOMENTUM });

/**
 * One training call of a batch-norm layer with set weights (gamma, beta, moving statistics: a
 * trained layer, not a fresh one), differentiated through a weighted sum of its output so every
 * element gets its own upstream gradient. Inputs have an offset (mean ≈ 3) to exercise centring.
 */
async function trainingCall(backend: Backend, made: Made, shape: number[], training = true) {
  await tf.setBackend(backend);
  const channels = shape[shape.length - 1]!;
  const tag = shape.join('x');
  const layer = makeLayer(made, `bn_${made}_${backend}_${tag}`);
  layer.build(shape);
  layer.setWeights([
    tf.tensor1d(randomArray(channels, `gamma ${tag}`, 0.5, 1.5)),
    tf.tensor1d(randomArray(channels, `beta ${tag}`)),
    tf.tensor1d(randomArray(channels, `mean ${tag}`)),
    tf.tensor1d(randomArray(channels, `var ${tag}`, 0.5, 2)),
  ]);
  const x = tf.variable(tf.tensor(randomArray(tf.util.sizeFromShape(shape), `x ${tag}`, 2, 4), shape));
  const w = tf.tensor(randomArray(tf.util.sizeFromShape(shape), `w ${tag}`), shape);
  const [gamma, beta] = layer.trainableWeights.map((v) => v.read() as tf.Variable);
  try {
    let y: Float32Array | null = null;
    const { grads } = tf.variableGrads(() => {
      const out = layer.apply(x, { training }) as tf.Tensor;
      y = out.dataSync() as Float32Array;
      return tf.sum(tf.mul(out, w)) as tf.Scalar;
    }, [x, gamma!, beta!]);
    const [, , movingMean, movingVariance] = layer.getWeights().map((t) => t.dataSync() as Float32Array);
    const result = { y: y!, movingMean: movingMean!, movingVariance: movingVariance!, dx: grads[x.name]!.dataSync() as Float32Array, dgamma: grads[gamma!.name]!.dataSync() as Float32Array, dbeta: grads[beta!.name]!.dataSync() as Float32Array };
    tf.dispose(Object.values(grads));
    return result;
  } finally {
    tf.dispose([x, w]);
    for (const weight of layer.weights) weight.dispose();
  }
}

const SHAPES: number[][] = [
  [64, 28, 28, 16],
  [8, 7, 5, 3],
  [3, 5, 9, 1],
  [1, 1, 1, 4],
  [2, 3, 3, 33],
  [16, 10], // a flat input, after a dense layer
  [5, 1],
  [1, 300],
];

beforeAll(async () => {
  expect((await initBackend({ prefer: ['wasm'] })).backend).toBe('wasm');
});

describe('ChannelBatchNorm', () => {
  for (const shape of SHAPES) {
    it(`matches the library's layer on the cpu backend in training mode for [${shape.join(', ')}]`, async () => {
      const ref = await trainingCall('cpu', 'library', shape);
      const got = await trainingCall('wasm', 'ours', shape);
      // A single row has zero variance: dx and dgamma are zero up to rounding, compared absolutely.
      const singleRow = shape.slice(0, -1).every((d) => d === 1);
      for (const key of Object.keys(ref) as Array<keyof typeof ref>) {
        expect(got[key].length, key).toBe(ref[key].length);
        const absolute = singleRow && (key === 'dx' || key === 'dgamma');
        const error = absolute ? Math.max(...got[key].map((v, i) => Math.abs(v - ref[key][i]!))) : relativeError(got[key], ref[key]);
        expect(error, key).toBeLessThan(TOLERANCE);
      }
    });
  }

  it('runs exactly the library ops where our kernel is not registered (cpu), and in inference mode', async () => {
    const shape = [4, 5, 6, 3];
    expect(tf.getKernel(BATCH_NORM_TRAINING, 'cpu')).toBeUndefined();
    expect(await trainingCall('cpu', 'ours', shape)).toEqual(await trainingCall('cpu', 'library', shape));
    const inference = await trainingCall('wasm', 'ours', shape, false);
    expect(inference).toEqual(await trainingCall('wasm', 'library', shape, false));
    expect(inference.dbeta.every((v) => v !== 0)).toBe(true);
  });

  it('differentiates through its mean and variance outputs too (against tf.moments on cpu)', async () => {
    const shape = [6, 4, 3, 5];
    const x = randomArray(tf.util.sizeFromShape(shape), 'mv x', -2, 3);
    const u = randomArray(5, 'mv u');
    const v = randomArray(5, 'mv v');
    const grad = async (backend: Backend) => {
      await tf.setBackend(backend);
      return tf.tidy(() => {
        const [gamma, beta] = [tf.tensor1d(randomArray(5, 'mv g', 0.5, 1.5)), tf.tensor1d(randomArray(5, 'mv b'))];
        const f = (input: tf.Tensor) => {
          const [y, mean, variance] =
            backend === 'wasm'
              ? (tf.engine().runKernel(BATCH_NORM_TRAINING, { x: input, scale: gamma, offset: beta }, { varianceEpsilon: 1e-3 }) as tf.Tensor[])
              : (() => {
                  const m = tf.moments(input, [0, 1, 2]);
                  return [tf.batchNorm(input, m.mean, m.variance, beta, gamma, 1e-3), m.mean, m.variance];
                })();
          return tf.sum(y!).add(tf.sum(tf.mul(mean!, u))).add(tf.sum(tf.mul(variance!, v)));
        };
        return tf.grad(f)(tf.tensor(x, shape)).dataSync() as Float32Array;
      });
    };
    expect(relativeError(await grad('wasm'), await grad('cpu'))).toBeLessThan(TOLERANCE);
  });

  it("serialises as the library's BatchNormalization: same config, and an exported model loads and predicts the same", async () => {
    await tf.setBackend('wasm');
    const ours = new ChannelBatchNorm({ name: 'bn', momentum: MOMENTUM });
    expect(ours.getClassName()).toBe('BatchNormalization');
    expect(ours.getConfig()).toEqual(tf.layers.batchNormalization({ name: 'bn', axis: -1, momentum: MOMENTUM }).getConfig());

    const input = tf.input({ shape: [4, 4, 3] });
    const model = tf.model({ inputs: input, outputs: new ChannelBatchNorm({ name: 'bn2', momentum: MOMENTUM }).apply(input) as tf.SymbolicTensor });
    const x = tf.tensor(randomArray(2 * 4 * 4 * 3, 'export x', 1, 3), [2, 4, 4, 3]);
    model.apply(x, { training: true }); // moves the moving statistics away from 0 and 1
    let saved: tf.io.ModelArtifacts | null = null;
    await model.save(tf.io.withSaveHandler(async (artifacts) => ((saved = artifacts), { modelArtifactsInfo: { dateSaved: new Date(), modelTopologyType: 'JSON' } })));
    const loaded = await tf.loadLayersModel(tf.io.fromMemory(saved!));
    try {
      expect(loaded.layers[1]).not.toBeInstanceOf(ChannelBatchNorm);
      expect(loaded.layers[1]!.getClassName()).toBe('BatchNormalization');
      const before = (model.predict(x) as tf.Tensor).dataSync();
      expect((loaded.predict(x) as tf.Tensor).dataSync()).toEqual(before);
    } finally {
      tf.dispose(x);
      model.dispose();
      loaded.dispose();
    }
  });

  it('trains a small conv → batch-norm → relu network with the loss curve of the cpu backend', async () => {
    const data: DataShape = { inputShape: [10, 10, 2], numClasses: 3 };
    const train = syntheticSamples(data, 96, 3);
    const genome = chainGenome(
      [
        { id: 'c1', kind: 'conv2d', filters: 6, kernelSize: 3, strides: 1, padding: 'same', activation: 'linear' },
        { id: 'b1', kind: 'batch-norm' },
        { id: 'r1', kind: 'activation', activation: 'relu' },
        { id: 'p1', kind: 'max-pool2d', poolSize: 2, strides: 2 },
        { id: 'f', kind: 'flatten' },
        { id: 'd1', kind: 'dense', units: 8, activation: 'linear' },
        { id: 'b2', kind: 'batch-norm' },
      ],
      { batchSize: 16, learningRate: 0.01 },
    );
    // Training losses only: a conv or dense bias feeding batch norm has a gradient of zero in
    // theory and rounding noise in practice, which Adam scales up to full-size steps that differ
    // between backends (the library's own layer on wasm does the same). Training-mode outputs
    // do not depend on that bias; inference through the moving mean, which lags it, does.
    const losses = async (backend: Backend) => {
      await tf.setBackend(backend);
      const outcome = await trainGenome({ genome, data, train, val: null, budget: { epochs: 4, maxSeconds: 120 }, seed: 5 });
      return outcome.history.map((h) => h.trainLoss);
    };
    const ref = await losses('cpu');
    const got = await losses('wasm');
    expect(ref[3]).toBeLessThan(ref[0]! / 2); // it does learn
    for (let i = 0; i < ref.length; i++) expect(Math.abs(got[i]! - ref[i]!) / ref[i]!, `epoch ${i + 1}`).toBeLessThan(TOLERANCE);
  });
});
