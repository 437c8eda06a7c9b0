import * as tf from '@tensorflow/tfjs';
import { afterEach, beforeAll, describe, expect, it, vi } from 'vitest';
import { ActivationSchema, GENOME_SCHEMA_VERSION, type Activation, type DataShape, type Genome } from '@netbreeder/shared-types';
import { initBackend } from './backend.js';
import { buildModel } from './build-model.js';
import { CompiledDenseStep, compiledStepOptions } from './compiled-dense-step.js';
import { activate, backActivate } from './compiled-step-math.js';
import { expectSameStep, oneTrainingStep } from './test-fixtures.js';
import { syntheticSamples } from './synthetic-samples.js';
import { trainGenome } from './train-genome.js';
import { meanSquaredError } from './evaluate-regression.js';

// Reference: the TensorFlow.js cpu backend (the library's reference implementation), training
// through the layers library and the autodiff tape. A compiled step's loss and every weight's
// gradient must agree with it within 1e-4 relative error (max |got − ref| / max |ref| per weight).
const TOLERANCE = 1e-4;

const genome = (nodes: unknown[], output: string, weightDecay = 0): Genome => ({
  schemaVersion: GENOME_SCHEMA_VERSION,
  nodes: nodes as Genome['nodes'],
  output,
  training: { optimizer: 'adam', learningRate: 0.01, batchSize: 8, weightDecay, epochs: 1 },
});

const IMAGE: DataShape = { inputShape: [6, 6, 2], numClasses: 4 };
const TABLE: DataShape = { inputShape: [7], numClasses: 3 };

/** Flatten, relu, dropout, tanh, a sigmoid layer and weight decay: every element-wise step the compiled route has. */
const MIXED = genome(
  [
    { id: 'f', kind: 'flatten', inputs: ['input'] },
    { id: 'd1', kind: 'dense', inputs: ['f'], units: 20, activation: 'relu' },
    { id: 'drop', kind: 'dropout', inputs: ['d1'], rate: 0.3 },
    { id: 'd2', kind: 'dense', inputs: ['drop'], units: 10, activation: 'tanh' },
    { id: 'act', kind: 'activation', inputs: ['d2'], activation: 'sigmoid' },
  ],
  'act',
  0.001,
);
/** The other activations: elu and relu6 from their outputs; selu and swish from their inputs (kept by a dense layer, read by an activation layer). */
const OTHER_ACTIVATIONS = genome(
  [
    { id: 'e', kind: 'dense', inputs: ['input'], units: 12, activation: 'elu' },
    { id: 'r6', kind: 'dense', inputs: ['e'], units: 11, activation: 'relu6' },
    { id: 'se', kind: 'dense', inputs: ['r6'], units: 10, activation: 'selu' },
    { id: 'sw', kind: 'dense', inputs: ['se'], units: 9, activation: 'swish' },
    { id: 'a1', kind: 'activation', inputs: ['sw'], activation: 'selu' },
    { id: 'a2', kind: 'activation', inputs: ['a1'], activation: 'swish' },
    { id: 'a3', kind: 'activation', inputs: ['a2'], activation: 'elu' },
  ],
  'a3',
);
/** The head alone (the minimal genome): a flatten node with nothing after it. */
const HEAD_ONLY = genome([{ id: 'f', kind: 'flatten', inputs: ['input'] }], 'f');
const LINEAR_SIGMOID = genome(
  [
    { id: 'a', kind: 'dense', inputs: ['input'], units: 9, activation: 'linear' },
    { id: 'b', kind: 'dense', inputs: ['a'], units: 5, activation: 'sigmoid' },
  ],
  'b',
);

type StepResult = Awaited<ReturnType<typeof oneTrainingStep>>;
const namedArrays = (named: Record<string, tf.Tensor>) => Object.fromEntries(Object.entries(named).map(([k, t]) => [k.replace(/_\d+$/, ''), t.dataSync().slice() as Float32Array]));

/** Regression targets for the fixture's 8 samples, from −3 to 3: the Huber loss meets both of its branches. */
const REGRESSION_TARGETS = Float32Array.from({ length: 8 }, (_, i) => -3 + (6 * i) / 7);

/** One compiled step on wasm from the fixture's model and batch (seed 21, 8 samples of seed 5); the optimizer only records the gradients. */
async function compiledStep(g: Genome, data: DataShape): Promise<StepResult> {
  await tf.setBackend('wasm');
  const samples = syntheticSamples(data, 8, 5);
  const model = buildModel(g, data, 21);
  const step = CompiledDenseStep.plan(model, g, data, 8)!;
  expect(step).not.toBeNull();
  let grads: Record<string, Float32Array> = {};
  const recorder = { applyGradients: (named: Record<string, tf.Tensor>) => (grads = namedArrays(named)) };
  const oneHot = new Float32Array(8 * data.numClasses);
  samples.labels.forEach((label, i) => (oneHot[i * data.numClasses + label] = 1));
  try {
    const { loss } = step.step(samples.features, data.target ? REGRESSION_TARGETS : oneHot, Int32Array.from(samples.labels), 8, recorder as unknown as tf.Optimizer);
    return { loss, grads };
  } finally {
    step.dispose();
    model.dispose();
  }
}

/** The same step of a regression genome through the layers library and the tape on the cpu backend, with train-genome.ts's loss. */
async function regressionReference(g: Genome, data: DataShape): Promise<StepResult> {
  await tf.setBackend('cpu');
  const samples = syntheticSamples(data, 8, 5);
  const model = buildModel(g, data, 21);
  try {
    return tf.tidy(() => {
      const x = tf.tensor(samples.features, [8, ...data.inputShape]);
      const y = tf.tensor2d(REGRESSION_TARGETS, [8, 1]);
      const { value, grads } = tf.variableGrads(() => {
        const out = model.apply(x, { training: true }) as tf.Tensor;
        let loss = data.target!.loss === 'huber' ? (tf.losses.huberLoss(y, out, undefined, 1) as tf.Scalar) : meanSquaredError(out, y);
        for (const p of model.calculateLosses()) loss = tf.add(loss, p) as tf.Scalar;
        return loss;
      });
      return { loss: value.dataSync()[0]!, grads: namedArrays(grads) };
    });
  } finally {
    model.dispose();
  }
}

beforeAll(async () => {
  await initBackend({ prefer: ['wasm'] });
});

afterEach(async () => {
  compiledStepOptions.enabled = true;
  await tf.setBackend('wasm');
});

describe('the activations of the compiled step', () => {
  // Every branch, including relu6's clip at 6 and the points 0 and 6 themselves.
  const X = Float32Array.from([-7, -2.5, -1, -0.25, 0, 1e-3, 0.5, 1, 2.75, 5.9, 6, 6.5, 9]);
  const G = Float32Array.from(X, (_, i) => 0.3 + 0.1 * i);
  it.each(ActivationSchema.anyOf.map((a) => a.const as Activation))('%s: output and gradient as the layers library and the tape give them on the cpu backend (reference)', async (a) => {
    await tf.setBackend('cpu');
    const layer = tf.layers.activation({ activation: a as never });
    const [y, dx] = tf.tidy(() => {
      const x = tf.tensor1d(X);
      const out = layer.apply(x) as tf.Tensor;
      const grad = tf.grad((v: tf.Tensor) => tf.sum(tf.mul(layer.apply(v) as tf.Tensor, tf.tensor1d(G))))(x);
      return [out.dataSync(), grad.dataSync()];
    });
    X.forEach((x, i) => {
      const mine = Math.fround(activate(a, x));
      expect(Math.abs(mine - y[i]!), `${a}(${x})`).toBeLessThanOrEqual(1e-6 * Math.max(1, Math.abs(y[i]!)));
      expect(Math.abs(backActivate(a, x, mine, G[i]!) - dx[i]!), `${a}'(${x})`).toBeLessThanOrEqual(1e-6 * Math.max(1, Math.abs(dx[i]!)));
    });
  });
});

describe('the compiled step of a chain of dense layers', () => {
  it.each([
    ['flatten, relu, dropout, tanh, sigmoid layer, weight decay', MIXED, IMAGE],
    ['the head alone', HEAD_ONLY, IMAGE],
    ['linear and sigmoid dense layers on a table', LINEAR_SIGMOID, TABLE],
    ['elu, relu6, selu and swish, as dense layers and as activation layers', OTHER_ACTIVATIONS, TABLE],
  ])('has the loss and gradients of the cpu backend (reference): %s', async (_name, g, data) => {
    const ref = await oneTrainingStep(g, data, 'cpu');
    const got = await compiledStep(g, data);
    const names = expectSameStep(got, ref, TOLERANCE);
    expect(names.length).toBe(2 * g.nodes.filter((n) => n.kind === 'dense').length + 2);
  });

  it.each([
    ['squared error', undefined],
    ['Huber loss', 'huber' as const],
  ])('has the loss and gradients of the cpu backend (reference) for a regression target: %s', async (_name, loss) => {
    const data: DataShape = { inputShape: [7], numClasses: 1, target: { column: 'price', mean: 0, std: 1, ...(loss ? { loss } : {}) } };
    const g = { ...MIXED, nodes: MIXED.nodes.slice(1).map((n) => (n.id === 'd1' ? { ...n, inputs: ['input'] } : n)) } as Genome;
    const ref = await regressionReference(g, data);
    const got = await compiledStep(g, data);
    expect(expectSameStep(got, ref, TOLERANCE)).toHaveLength(6);
  });

  it('trains a genome as the tape does: same curve within 1e-4, tensors freed, and it is the route taken', async () => {
    const data = TABLE;
    const g = { ...MIXED, nodes: MIXED.nodes.slice(1).map((n) => (n.id === 'd1' ? { ...n, inputs: ['input'] } : n)) } as Genome;
    const train = syntheticSamples(data, 100, 3); // six batches of 16 and one of 4
    const val = syntheticSamples(data, 40, 4);
    const request = { genome: { ...g, training: { ...g.training, batchSize: 16 } }, data, train, val, budget: { epochs: 3, maxSeconds: 60 }, seed: 5 };
    const spy = vi.spyOn(CompiledDenseStep.prototype, 'step');
    const before = tf.memory().numTensors;
    const compiled = await trainGenome(request);
    expect(tf.memory().numTensors).toBe(before);
    const again = await trainGenome(request);
    expect(again.history).toEqual(compiled.history.map((r, i) => ({ ...r, seconds: again.history[i]!.seconds })));
    expect(spy).toHaveBeenCalledTimes(2 * 3 * 7);
    compiledStepOptions.enabled = false;
    const taped = await trainGenome(request);
    expect(spy).toHaveBeenCalledTimes(2 * 3 * 7);
    spy.mockRestore();
    for (const [a, b] of compiled.history.map((r, i) => [r, taped.history[i]!] as const)) {
      expect(Math.abs(a.trainLoss - b.trainLoss) / b.trainLoss).toBeLessThan(TOLERANCE);
      expect(Math.abs(a.valLoss! - b.valLoss!) / b.valLoss!).toBeLessThan(TOLERANCE);
      expect(a.trainAccuracy).toBe(b.trainAccuracy);
      expect(a.valAccuracy).toBe(b.valAccuracy);
    }
  });

  it.each([
    ['a convolution', genome([{ id: 'c', kind: 'conv2d', inputs: ['input'], filters: 2, kernelSize: 3, strides: 1, padding: 'same', activation: 'relu' }], 'c'), IMAGE],
    ['batch norm', genome([{ id: 'd', kind: 'dense', inputs: ['input'], units: 4, activation: 'relu' }, { id: 'b', kind: 'batch-norm', inputs: ['d'] }], 'b'), TABLE],
    [
      'a branch',
      genome(
        [
          { id: 'a', kind: 'dense', inputs: ['input'], units: 4, activation: 'relu' },
          { id: 'b', kind: 'dense', inputs: ['input'], units: 4, activation: 'relu' },
          { id: 's', kind: 'add', inputs: ['a', 'b'] },
        ],
        's',
      ),
      TABLE,
    ],
    ['a global pool', genome([{ id: 'g', kind: 'global-avg-pool', inputs: ['input'] }, { id: 'd', kind: 'dense', inputs: ['g'], units: 4, activation: 'relu' }], 'd'), IMAGE],
  ])('is not planned for %s (the tape trains it)', (_name, g, data) => {
    const model = buildModel(g, data, 1);
    try {
      expect(CompiledDenseStep.plan(model, g, data, 8)).toBeNull();
    } finally {
      model.dispose();
    }
  });

  it('is not planned on the cpu backend', async () => {
    await tf.setBackend('cpu');
    const model = buildModel(LINEAR_SIGMOID, TABLE, 1);
    try {
      expect(CompiledDenseStep.plan(model, LINEAR_SIGMOID, TABLE, 8)).toBeNull();
    } finally {
      model.dispose();
    }
  });
});
