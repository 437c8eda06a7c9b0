import * as tf from '@tensorflow/tfjs';
import { InternalError } from '@netbreeder/shared-types';

type Conv1dArgs = Parameters<typeof tf.layers.conv1d>[0];

/** Arguments of {@link DilatedConv1d}: those of the library's conv1d, with a dilation above 1 and stride 1. */
export interface DilatedConv1dArgs {
  name: string;
  filters: number;
  kernelSize: number;
  dilation: number;
  padding: 'same' | 'valid';
  activation: Conv1dArgs['activation'];
  kernelInitializer: ReturnType<typeof tf.initializers.glorotUniform>;
  kernelRegularizer?: ReturnType<typeof tf.regularizers.l2> | undefined;
}

/**
 * A 1-D convolution with dilation d > 1 that can be trained. TensorFlow.js computes a dilated
 * convolution forward but refuses its gradient on every backend ("dilation rates greater than 1 are
 * not yet supported in gradients"). This layer writes it as an undilated one: the padded sequence
 * is cut into d interleaved phases (time step t goes to phase t mod d), each phase is convolved
 * with the kernel at dilation 1, and the phases are interleaved back; output step t = j·d + r is
 * phase r's step j, which reads input steps t, t + d, … as the dilated kernel does. Only pad,
 * reshape, transpose, slice and an undilated conv1d, so every gradient exists on wasm and cpu.
 *
 * It serialises as the library's `Conv1D` with `dilationRate` d (same weights `kernel` [k, in,
 * filters] and `bias`), so an exported model loads with plain `tf.loadLayersModel` and predicts
 * the same.
 */
export class DilatedConv1d extends tf.layers.Layer {
  static className = 'Conv1D';
  private readonly args: DilatedConv1dArgs;
  /** The library layer this one stands for: its config is this one's saved form, its activation this one's. */
  private readonly library: tf.layers.Layer;
  private readonly activationLayer: tf.layers.Layer;
  private kernel: tf.LayerVariable | null = null;
  private bias: tf.LayerVariable | null = null;

  constructor(args: DilatedConv1dArgs) {
    super({ name: args.name });
    if (!(Number.isInteger(args.dilation) && args.dilation > 1)) throw new InternalError(`DilatedConv1d needs an integer dilation above 1, got ${args.dilation}`);
    this.args = args;
    this.library = tf.layers.conv1d({ name: args.name, filters: args.filters, kernelSize: args.kernelSize, strides: 1, dilationRate: args.dilation, padding: args.padding, activation: args.activation });
    this.activationLayer = tf.layers.activation({ activation: args.activation ?? 'linear' });
  }

  /** Steps of the receptive field: (k − 1)·d + 1. */
  private get span(): number {
    return (this.args.kernelSize - 1) * this.args.dilation + 1;
  }

  override build(inputShape: tf.Shape | tf.Shape[]): void {
    const shape = (Array.isArray(inputShape[0]) ? inputShape[0] : inputShape) as tf.Shape;
    const channels = shape[2];
    if (shape.length !== 3 || channels == null) throw new InternalError(`conv1d needs a [batch, time, channels] input, got [${shape.join(', ')}]`);
    this.kernel = this.addWeight('kernel', [this.args.kernelSize, channels, this.args.filters], 'float32', this.args.kernelInitializer, this.args.kernelRegularizer, true);
    this.bias = this.addWeight('bias', [this.args.filters], 'float32', tf.initializers.zeros(), undefined, true);
    this.built = true;
  }

  override computeOutputShape(inputShape: tf.Shape | tf.Shape[]): tf.Shape {
    const shape = (Array.isArray(inputShape[0]) ? inputShape[0] : inputShape) as tf.Shape;
    const steps = shape[1];
    const out = steps == null ? null : this.args.padding === 'same' ? steps : steps - this.span + 1;
    return [shape[0]!, out, this.args.filters];
  }

  override call(inputs: tf.Tensor | tf.Tensor[]): tf.Tensor {
    return tf.tidy(() => {
      const x = (Array.isArray(inputs) ? inputs[0]! : inputs) as tf.Tensor3D;
      const [batch, steps, channels] = x.shape;
      const d = this.args.dilation;
      const k = this.args.kernelSize;
      const total = this.args.padding === 'same' ? this.span - 1 : 0; // TensorFlow's "same" at stride 1: the odd step at the end
      const before = Math.floor(total / 2);
      const padded = steps + total;
      const outSteps = padded - this.span + 1;
      const perPhase = Math.ceil(padded / d);
      const xp = tf.pad(x, [[0, 0], [before, total - before + perPhase * d - padded], [0, 0]]);
      const phases = tf.transpose(tf.reshape(xp, [batch, perPhase, d, channels]), [0, 2, 1, 3]).reshape([batch * d, perPhase, channels]) as tf.Tensor3D;
      const conv = tf.conv1d(phases, this.kernel!.read() as tf.Tensor3D, 1, 'valid');
      const convSteps = perPhase - k + 1;
      const interleaved = tf.transpose(tf.reshape(conv, [batch, d, convSteps, this.args.filters]), [0, 2, 1, 3]).reshape([batch, convSteps * d, this.args.filters]);
      const y = tf.add(tf.slice(interleaved, [0, 0, 0], [batch, outSteps, this.args.filters]), this.bias!.read());
      return this.activationLayer.apply(y) as tf.Tensor;
    });
  }

  override getConfig(): tf.serialization.ConfigDict {
    return { ...this.library.getConfig(), ...super.getConfig() };
  }
}
