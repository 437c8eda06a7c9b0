import * as tf from '@tensorflow/tfjs';
import { InternalError, analyzeGenome, createRandom, expandMotifs, headUnits, INPUT_ID, topologicalOrder, type Activation, type DataShape, type Genome, type LayerNode } from '@netbreeder/shared-types';
import { InvalidGenomeError } from './errors.js';
import { ChannelBatchNorm } from './channel-batch-norm.js';
import { SeededDropout } from './seeded-dropout.js';
import { DilatedConv1d } from './dilated-conv1d.js';

/** Names of the implicit head's layers; genome ids cannot contain a dot, so these never collide. */
export const HEAD_FLATTEN_NAME = 'head.flatten';
export const HEAD_DENSE_NAME = 'head.dense';

/**
 * How much of its moving mean and variance a batch-norm layer keeps per step (the rest is the
 * batch's). 0.9 rather than the layers library's 0.99: a search training is often one to a few
 * epochs of a small dataset (47 steps an epoch for 3,000 samples in batches of 64), and with 0.99
 * the moving statistics still hold 62% of their initial values after those 47 steps, so a network
 * that trained well scores near chance on validation (seen on MNIST: 37% validation accuracy after
 * one epoch). With 0.9 the initial values are gone after about 40 steps (common practice: 0.9 is
 * the other usual default).
 */
export const BATCH_NORM_MOMENTUM = 0.9;

type Sym = tf.SymbolicTensor;

/**
 * Builds the TensorFlow.js functional model of a genome: one layer per node (named by the node's
 * id; a repeat's layers are its motif's nodes once per application, named `r.k.c` by
 * `expandMotifs`), then the implicit head that `analyzeGenome` describes (flatten when the output is still
 * spatial, then a dense softmax with one unit per class, or one linear unit for a regression
 * target). Initialisers and dropout masks are
 * seeded from `seed`, one derived seed per layer, so the same genome and seed give the same model.
 * Throws {@link InvalidGenomeError} when the genome does not fit the data shape.
 */
export function buildModel(genome: Genome, data: DataShape, seed: number): tf.LayersModel {
  const analysis = analyzeGenome(genome, data);
  if (!analysis.ok) throw new InvalidGenomeError(analysis.issues);
  const layers = expandMotifs(genome).genome;
  const topo = topologicalOrder(layers);
  if (!topo.ok) throw new InvalidGenomeError(topo.issues);

  const random = createRandom(`build ${seed}`);
  const nextSeed = () => random.uint32();
  const weightDecay = genome.training.weightDecay;
  const regularizer = () => (weightDecay > 0 ? tf.regularizers.l2({ l2: weightDecay }) : undefined);
  const glorot = () => tf.initializers.glorotUniform({ seed: nextSeed() });

  const input = tf.input({ shape: [...data.inputShape], name: INPUT_ID });
  const tensors = new Map<string, Sym>([[INPUT_ID, input]]);
  const single = (n: LayerNode): Sym => tensors.get(n.inputs[0]!)!;

  for (const n of topo.order) {
    let layer: tf.layers.Layer;
    switch (n.kind) {
      case 'dense':
        layer = tf.layers.dense({ name: n.id, units: n.units, activation: act(n.activation), kernelInitializer: glorot(), kernelRegularizer: regularizer() });
        break;
      case 'conv2d':
        layer = tf.layers.conv2d({
          name: n.id,
          filters: n.filters,
          kernelSize: n.kernelSize,
          strides: n.strides,
          padding: n.padding,
          activation: act(n.activation),
          kernelInitializer: glorot(),
          kernelRegularizer: regularizer(),
        });
        break;
      case 'depthwise-conv2d':
        layer = tf.layers.depthwiseConv2d({
          name: n.id,
          kernelSize: n.kernelSize,
          strides: n.strides,
          padding: n.padding,
          depthMultiplier: n.depthMultiplier,
          activation: act(n.activation),
          depthwiseInitializer: glorot(),
          depthwiseRegularizer: regularizer(),
        });
        break;
      case 'max-pool2d':
        layer = tf.layers.maxPooling2d({ name: n.id, poolSize: n.poolSize, strides: n.strides, padding: 'valid' });
        break;
      case 'avg-pool2d':
        layer = tf.layers.averagePooling2d({ name: n.id, poolSize: n.poolSize, strides: n.strides, padding: 'valid' });
        break;
      case 'conv1d': {
        const args = { name: n.id, filters: n.filters, kernelSize: n.kernelSize, padding: n.padding, activation: act(n.activation), kernelInitializer: glorot(), kernelRegularizer: regularizer() };
        // TensorFlow.js has no gradient for a dilated convolution; DilatedConv1d writes it as undilated ones.
        layer = n.dilation > 1 ? new DilatedConv1d({ ...args, dilation: n.dilation }) : tf.layers.conv1d({ ...args, strides: n.strides, dilationRate: n.dilation });
        break;
      }
      case 'max-pool1d':
        layer = tf.layers.maxPooling1d({ name: n.id, poolSize: n.poolSize, strides: n.strides, padding: 'valid' });
        break;
      case 'avg-pool1d':
        layer = tf.layers.averagePooling1d({ name: n.id, poolSize: n.poolSize, strides: n.strides, padding: 'valid' });
        break;
      case 'lstm':
      case 'gru': {
        // The recurrent kernel gets a seeded Glorot-uniform initialiser too, not the layers
        // library's default orthogonal one (a QR decomposition per layer, slow on large units).
        // Gates use the logistic sigmoid (common practice), not the library's default hard sigmoid.
        const config = {
          name: n.id,
          units: n.units,
          returnSequences: n.returnSequences,
          recurrentActivation: 'sigmoid' as const,
          kernelInitializer: glorot(),
          recurrentInitializer: glorot(),
          kernelRegularizer: regularizer(),
        };
        layer = n.kind === 'lstm' ? tf.layers.lstm(config) : tf.layers.gru(config);
        break;
      }
      case 'dropout':
        layer = new SeededDropout({ name: n.id, rate: n.rate, seed: nextSeed() });
        break;
      case 'batch-norm':
        layer = new ChannelBatchNorm({ name: n.id, momentum: BATCH_NORM_MOMENTUM });
        break;
      case 'activation':
        layer = tf.layers.activation({ name: n.id, activation: act(n.activation) });
        break;
      case 'flatten':
        layer = tf.layers.flatten({ name: n.id });
        break;
      case 'global-avg-pool':
      case 'global-max-pool': {
        // Over time for a sequence (time steps × channels), over height and width for an image.
        const sequence = single(n).shape.length === 3;
        const avg = n.kind === 'global-avg-pool';
        layer = sequence
          ? avg ? tf.layers.globalAveragePooling1d({ name: n.id }) : tf.layers.globalMaxPooling1d({ name: n.id })
          : avg ? tf.layers.globalAveragePooling2d({ name: n.id }) : tf.layers.globalMaxPooling2d({ name: n.id });
        break;
      }
      case 'add':
        layer = tf.layers.add({ name: n.id });
        break;
      case 'concat':
        layer = tf.layers.concatenate({ name: n.id, axis: -1 });
        break;
      case 'repeat':
        throw new InternalError('expandMotifs leaves no repeat node');
    }
    const inputs = n.inputs.length === 1 ? single(n) : n.inputs.map((i) => tensors.get(i)!);
    tensors.set(n.id, layer.apply(inputs) as Sym);
  }

  let last = tensors.get(layers.output)!;
  if (last.shape.length !== 2) last = tf.layers.flatten({ name: HEAD_FLATTEN_NAME }).apply(last) as Sym;
  const output = tf.layers
    .dense({ name: HEAD_DENSE_NAME, units: headUnits(data), activation: data.target ? 'linear' : 'softmax', kernelInitializer: glorot(), kernelRegularizer: regularizer() })
    .apply(last) as Sym;
  return tf.model({ inputs: input, outputs: output, name: 'genome' });
}

type TfActivation = NonNullable<Parameters<typeof tf.layers.activation>[0]>['activation'];
const act = (a: Activation): TfActivation => a as TfActivation;
