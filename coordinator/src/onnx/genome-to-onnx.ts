import { analyzeGenome, expandMotifs, headUnits, INPUT_ID, InternalError, NetbreederError, topologicalOrder, type Activation, type DataShape, type Genome, type LayerNode, type SampleShape } from '@netbreeder/shared-types';
import { floatAttr, intAttr, intsAttr, type OnnxGraphBuilder } from './onnx-graph.js';
import type { NamedWeight } from './model-weights.js';

/**
 * Names of the implicit head's layers in the TensorFlow.js model (see the worker's `buildModel`);
 * the head's dense weights are `head.dense/kernel` and `head.dense/bias`.
 */
const HEAD_DENSE = 'head.dense';
/** The epsilon every batch-norm layer of a genome model uses (the worker's `ChannelBatchNorm` default). */
export const BATCH_NORM_EPSILON = 1e-3;
/** SELU's constants as TensorFlow.js defines them: scale and scale × alpha. */
const SELU_SCALE = 1.0507009873554804934193349852946;
const SELU_ALPHA = 1.7580993408473768599402175208123 / SELU_SCALE;

/**
 * A value inside the ONNX graph and its layout. Image tensors enter as the TensorFlow.js model takes
 * them (batch × height × width × channels) and are transposed once to batch × channels × height ×
 * width, the layout ONNX's convolution and pooling operators use; sequences likewise from batch ×
 * time × channels to batch × channels × time (`sequence`); flat tensors are batch × features.
 */
interface Value {
  name: string;
  layout: 'channels-first' | 'sequence' | 'flat';
}

/** The transposition from TensorFlow.js's channels-last order to ONNX's channels-first one, by sample rank. */
const CHANNELS_FIRST: Record<number, number[]> = { 2: [0, 2, 1], 3: [0, 3, 1, 2] };

/**
 * Adds one genome's inference graph to `graph`: from the value `input` (batch × the dataset's
 * sample shape, as the TensorFlow.js model takes it) to the head's output (softmax probabilities,
 * or the standardised regression prediction); returns the output's name. Layers map to ONNX
 * operators one by one; dropout is the identity at inference and batch normalisation uses its
 * moving statistics. `weights` are the trained model's, by TensorFlow.js weight name.
 */
export function addGenomeGraph(graph: OnnxGraphBuilder, genome: Genome, data: DataShape, weights: ReadonlyMap<string, NamedWeight>, input: string): string {
  const analysis = analyzeGenome(genome, data);
  if (!analysis.ok) throw new NetbreederError('NB_ONNX_EXPORT', `the genome does not fit the data: ${analysis.issues.map((i) => i.message).join('; ')}`);
  const layers = expandMotifs(genome).genome;
  const topo = topologicalOrder(layers);
  if (!topo.ok) throw new NetbreederError('NB_ONNX_EXPORT', `the genome's layers form no order: ${topo.issues.map((i) => i.message).join('; ')}`);
  const shapes = new Map<string, SampleShape>([[INPUT_ID, data.inputShape], ...analysis.analysis.nodes.map((n) => [n.id, n.outputShape] as const)]);

  const weight = (layer: string, name: string): NamedWeight => {
    const w = weights.get(`${layer}/${name}`);
    if (!w) throw new NetbreederError('NB_ONNX_EXPORT', `the trained model has no weight ${layer}/${name}; was it trained from this genome?`);
    return w;
  };
  const values = new Map<string, Value>();
  const perm = CHANNELS_FIRST[data.inputShape.length];
  values.set(
    INPUT_ID,
    perm ? { name: graph.op('Transpose', [input], 'input.channels_first', [intsAttr('perm', perm)]), layout: data.inputShape.length === 2 ? 'sequence' : 'channels-first' } : { name: input, layout: 'flat' },
  );

  for (const n of topo.order) {
    const inputs = n.inputs.map((i) => values.get(i)!);
    const x = inputs[0]!;
    values.set(n.id, layerOp(graph, n, x, inputs, shapes.get(n.inputs[0]!)!, weight));
  }

  const last = toFlat(graph, values.get(layers.output)!, 'head.flatten');
  const kernel = weight(HEAD_DENSE, 'kernel');
  const bias = weight(HEAD_DENSE, 'bias');
  if (kernel.shape[1] !== headUnits(data)) throw new NetbreederError('NB_ONNX_EXPORT', `the head has ${kernel.shape[1]} units but the data needs ${headUnits(data)}`);
  const logits = graph.op('Gemm', [last.name, graph.constant('head.dense.kernel', kernel.shape, kernel.values), graph.constant('head.dense.bias', bias.shape, bias.values)], 'head.dense');
  return data.target ? logits : graph.op('Softmax', [logits], 'head.softmax', [intAttr('axis', 1)]);
}

/** Layer kinds the ONNX export writes (every kind of the genome schema today). */
export const ONNX_LAYER_KINDS: ReadonlySet<LayerNode['kind']> = new Set(['dense', 'conv2d', 'depthwise-conv2d', 'max-pool2d', 'avg-pool2d', 'conv1d', 'max-pool1d', 'avg-pool1d', 'lstm', 'gru', 'dropout', 'batch-norm', 'activation', 'flatten', 'global-avg-pool', 'global-max-pool', 'add', 'concat', 'repeat']);

/** Why a genome cannot be written as ONNX (a layer kind the export does not map), or null when it can. */
export function onnxUnsupported(genome: Genome): string | null {
  const kinds = new Set([...genome.nodes, ...(genome.motifs ?? []).flatMap((m) => m.nodes)].map((n) => n.kind).filter((k) => !ONNX_LAYER_KINDS.has(k)));
  return kinds.size ? `the ONNX export does not write ${[...kinds].join(', ')} layers yet; use model.json (TensorFlow.js)` : null;
}

type WeightOf = (layer: string, name: string) => NamedWeight;

/** The ONNX operators of one layer node; `inShape` is its first input's sample shape (TensorFlow.js order). */
function layerOp(graph: OnnxGraphBuilder, n: LayerNode, x: Value, inputs: Value[], inShape: SampleShape, weight: WeightOf): Value {
  const spatial = (name: string): Value => ({ name, layout: 'channels-first' });
  switch (n.kind) {
    case 'dense': {
      const k = weight(n.id, 'kernel');
      const b = weight(n.id, 'bias');
      const y = graph.op('Gemm', [x.name, graph.constant(`${n.id}.kernel`, k.shape, k.values), graph.constant(`${n.id}.bias`, b.shape, b.values)], n.id);
      return { name: activation(graph, y, n.activation, n.id), layout: 'flat' };
    }
    case 'conv2d':
    case 'depthwise-conv2d': {
      const depthwise = n.kind === 'depthwise-conv2d';
      const k = weight(n.id, depthwise ? 'depthwise_kernel' : 'kernel');
      const b = weight(n.id, 'bias');
      const w = depthwise ? depthwiseFilters(k) : convFilters(k);
      const attrs = [
        intsAttr('kernel_shape', [n.kernelSize, n.kernelSize]),
        intsAttr('strides', [n.strides, n.strides]),
        intsAttr('pads', samePads(inShape, n.kernelSize, n.strides, n.padding)),
        intAttr('group', depthwise ? inShape[2]! : 1),
      ];
      const y = graph.op('Conv', [x.name, graph.constant(`${n.id}.kernel`, w.shape, w.values), graph.constant(`${n.id}.bias`, b.shape, b.values)], n.id, attrs);
      return spatial(activation(graph, y, n.activation, n.id));
    }
    case 'max-pool2d':
    case 'avg-pool2d':
      return spatial(graph.op(n.kind === 'max-pool2d' ? 'MaxPool' : 'AveragePool', [x.name], n.id, [intsAttr('kernel_shape', [n.poolSize, n.poolSize]), intsAttr('strides', [n.strides, n.strides])]));
    case 'conv1d': {
      const k = weight(n.id, 'kernel');
      const b = weight(n.id, 'bias');
      const w = convFilters1d(k);
      const attrs = [
        intsAttr('kernel_shape', [n.kernelSize]),
        intsAttr('strides', [n.strides]),
        intsAttr('dilations', [n.dilation]),
        intsAttr('pads', samePads1d(inShape[0]!, (n.kernelSize - 1) * n.dilation + 1, n.strides, n.padding)),
      ];
      const y = graph.op('Conv', [x.name, graph.constant(`${n.id}.kernel`, w.shape, w.values), graph.constant(`${n.id}.bias`, b.shape, b.values)], n.id, attrs);
      return { name: activation(graph, y, n.activation, n.id), layout: 'sequence' };
    }
    case 'max-pool1d':
    case 'avg-pool1d':
      return { name: graph.op(n.kind === 'max-pool1d' ? 'MaxPool' : 'AveragePool', [x.name], n.id, [intsAttr('kernel_shape', [n.poolSize]), intsAttr('strides', [n.strides])]), layout: 'sequence' };
    case 'lstm':
    case 'gru':
      return recurrentOp(graph, n, x, weight);
    case 'dropout':
      return x;
    case 'batch-norm': {
      const p = (name: string) => {
        const w = weight(n.id, name);
        return graph.constant(`${n.id}.${name}`, w.shape, w.values);
      };
      const y = graph.op('BatchNormalization', [x.name, p('gamma'), p('beta'), p('moving_mean'), p('moving_variance')], n.id, [floatAttr('epsilon', BATCH_NORM_EPSILON)]);
      return { name: y, layout: x.layout };
    }
    case 'activation':
      return { name: activation(graph, x.name, n.activation, n.id), layout: x.layout };
    case 'flatten':
      return toFlat(graph, x, n.id);
    case 'global-avg-pool':
    case 'global-max-pool': {
      const pooled = graph.op(n.kind === 'global-avg-pool' ? 'GlobalAveragePool' : 'GlobalMaxPool', [x.name], `${n.id}.pooled`);
      return { name: graph.op('Flatten', [pooled], n.id, [intAttr('axis', 1)]), layout: 'flat' };
    }
    case 'add':
      return { name: graph.op('Sum', inputs.map((v) => v.name), n.id), layout: x.layout };
    case 'concat':
      // The last axis in TensorFlow.js order: channels (axis 1 once channels-first) or features.
      return { name: graph.op('Concat', inputs.map((v) => v.name), n.id, [intAttr('axis', 1)]), layout: x.layout };
    case 'repeat':
      throw new InternalError('expandMotifs leaves no repeat node');
  }
}

/**
 * TensorFlow.js's gate blocks in ONNX's order: its LSTM keeps [input, forget, cell, output] where
 * ONNX's LSTM wants [input, output, forget, cell]; both GRUs keep [update, reset, candidate].
 */
const GATE_ORDER = { lstm: [0, 3, 1, 2], gru: [0, 1, 2] } as const;

/**
 * An ONNX LSTM or GRU node for a recurrent layer (sigmoid gates, tanh elsewhere, as the worker
 * builds them). TensorFlow.js's GRU applies the reset gate before the recurrent product, ONNX's
 * `linear_before_reset = 0` (the default); it has one bias per gate, so the recurrent biases are
 * zero. The sequence enters as time × batch × channels; the whole output sequence goes back to
 * batch × units × time, the last step's state (`Y_h`) to batch × units.
 */
function recurrentOp(graph: OnnxGraphBuilder, n: Extract<LayerNode, { kind: 'lstm' | 'gru' }>, x: Value, weight: WeightOf): Value {
  const order = GATE_ORDER[n.kind];
  const units = n.units;
  const gatesOf = (w: NamedWeight, rows: number): Float32Array => {
    const out = new Float32Array(w.values.length);
    const width = order.length * units;
    order.forEach((from, to) => {
      for (let u = 0; u < units; u++) for (let r = 0; r < rows; r++) out[(to * units + u) * rows + r] = w.values[r * width + from * units + u]!;
    });
    return out;
  };
  const k = weight(n.id, 'kernel');
  const rk = weight(n.id, 'recurrent_kernel');
  const b = weight(n.id, 'bias');
  const channels = k.shape[0]!;
  const bias = new Float32Array(2 * order.length * units);
  order.forEach((from, to) => bias.set(b.values.subarray(from * units, (from + 1) * units), to * units));
  const inputs = [
    graph.op('Transpose', [x.name], `${n.id}.time_major`, [intsAttr('perm', [2, 0, 1])]),
    graph.constant(`${n.id}.W`, [1, order.length * units, channels], gatesOf(k, channels)),
    graph.constant(`${n.id}.R`, [1, order.length * units, units], gatesOf(rk, units)),
    graph.constant(`${n.id}.B`, [1, bias.length], bias),
  ];
  const opType = n.kind === 'lstm' ? 'LSTM' : 'GRU';
  const attrs = [intAttr('hidden_size', units)];
  if (n.returnSequences) {
    const [y] = graph.opOutputs(opType, inputs, [`${n.id}.y`], attrs);
    const steps = graph.op('Squeeze', [y!, graph.int64Constant(`${n.id}.direction_axis`, [1], [1])], `${n.id}.steps`);
    return { name: graph.op('Transpose', [steps], n.id, [intsAttr('perm', [1, 2, 0])]), layout: 'sequence' };
  }
  const [, last] = graph.opOutputs(opType, inputs, ['', `${n.id}.y_h`], attrs);
  return { name: graph.op('Squeeze', [last!, graph.int64Constant(`${n.id}.direction_axis`, [1], [0])], n.id), layout: 'flat' };
}

/** A flat value: channels-first images are put back in TensorFlow.js order first, so the flattened features line up with the trained dense weights. */
function toFlat(graph: OnnxGraphBuilder, x: Value, id: string): Value {
  if (x.layout === 'flat') return x;
  const channelsLast = graph.op('Transpose', [x.name], `${id}.channels_last`, [intsAttr('perm', x.layout === 'sequence' ? [0, 2, 1] : [0, 2, 3, 1])]);
  return { name: graph.op('Flatten', [channelsLast], id, [intAttr('axis', 1)]), layout: 'flat' };
}

/** The node(s) applying an activation to `x`; returns the output name (`x` itself for linear). */
function activation(graph: OnnxGraphBuilder, x: string, a: Activation, id: string): string {
  const out = `${id}.${a}`;
  switch (a) {
    case 'linear':
      return x;
    case 'relu':
      return graph.op('Relu', [x], out);
    case 'relu6':
      return graph.op('Clip', [x, graph.constant(`${id}.relu6.min`, [], Float32Array.of(0)), graph.constant(`${id}.relu6.max`, [], Float32Array.of(6))], out);
    case 'elu':
      return graph.op('Elu', [x], out, [floatAttr('alpha', 1)]);
    case 'selu':
      return graph.op('Selu', [x], out, [floatAttr('alpha', SELU_ALPHA), floatAttr('gamma', SELU_SCALE)]);
    case 'tanh':
      return graph.op('Tanh', [x], out);
    case 'sigmoid':
      return graph.op('Sigmoid', [x], out);
    case 'swish':
      return graph.op('Mul', [x, graph.op('Sigmoid', [x], `${id}.swish.gate`)], out);
  }
}

/**
 * Explicit pads [top, left, bottom, right] of a square window, as TensorFlow's "same" padding puts
 * them (the odd pixel at the bottom and right); zeros for "valid".
 */
export function samePads(inShape: SampleShape, kernel: number, stride: number, padding: 'same' | 'valid'): number[] {
  if (padding === 'valid') return [0, 0, 0, 0];
  const total = (length: number) => Math.max((Math.ceil(length / stride) - 1) * stride + kernel - length, 0);
  const [h, w] = [total(inShape[0]!), total(inShape[1]!)];
  return [Math.floor(h / 2), Math.floor(w / 2), h - Math.floor(h / 2), w - Math.floor(w / 2)];
}

/** Explicit pads [start, end] of a window spanning `span` steps over `length` time steps, as TensorFlow's "same" padding puts them (the odd step at the end); zeros for "valid". */
export function samePads1d(length: number, span: number, stride: number, padding: 'same' | 'valid'): number[] {
  if (padding === 'valid') return [0, 0];
  const total = Math.max((Math.ceil(length / stride) - 1) * stride + span - length, 0);
  return [Math.floor(total / 2), total - Math.floor(total / 2)];
}

/** A 1-D convolution kernel from TensorFlow.js's [k, in, out] to ONNX's [out, in, k]. */
function convFilters1d(k: NamedWeight): NamedWeight {
  const [kt, cin, cout] = k.shape as [number, number, number];
  const values = new Float32Array(k.values.length);
  for (let i = 0; i < kt; i++) for (let c = 0; c < cin; c++) for (let o = 0; o < cout; o++) values[(o * cin + c) * kt + i] = k.values[(i * cin + c) * cout + o]!;
  return { shape: [cout, cin, kt], values };
}

/** A convolution kernel from TensorFlow.js's [kh, kw, in, out] to ONNX's [out, in, kh, kw]. */
function convFilters(k: NamedWeight): NamedWeight {
  const [kh, kw, cin, cout] = k.shape as [number, number, number, number];
  const values = new Float32Array(k.values.length);
  for (let i = 0; i < kh; i++)
    for (let j = 0; j < kw; j++)
      for (let c = 0; c < cin; c++)
        for (let o = 0; o < cout; o++) values[((o * cin + c) * kh + i) * kw + j] = k.values[((i * kw + j) * cin + c) * cout + o]!;
  return { shape: [cout, cin, kh, kw], values };
}

/**
 * A depthwise kernel from TensorFlow.js's [kh, kw, channels, multiplier] to the grouped ONNX
 * convolution's [channels × multiplier, 1, kh, kw]; output channel c × multiplier + m comes from
 * input channel c, as in TensorFlow.js.
 */
function depthwiseFilters(k: NamedWeight): NamedWeight {
  const [kh, kw, channels, mult] = k.shape as [number, number, number, number];
  const values = new Float32Array(k.values.length);
  for (let i = 0; i < kh; i++)
    for (let j = 0; j < kw; j++)
      for (let c = 0; c < channels; c++)
        for (let m = 0; m < mult; m++) values[((c * mult + m) * kh + i) * kw + j] = k.values[((i * kw + j) * channels + c) * mult + m]!;
  return { shape: [channels * mult, 1, kh, kw], values };
}
