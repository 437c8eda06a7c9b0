import * as tf from '@tensorflow/tfjs';
import { BATCH_NORM_TRAINING } from './kernels/batch-norm-training.js';
import { InternalError } from '@netbreeder/shared-types';

/** Arguments of {@link ChannelBatchNorm}. */
export interface ChannelBatchNormArgs {
  /** How much of the moving mean and variance is kept per training step, in [0, 1). */
  momentum: number;
  /** Added to the variance before its square root; the layers library's default. */
  epsilon?: number;
  name?: string;
}

/** The layers library's default epsilon for batch normalisation. */
const DEFAULT_EPSILON = 1e-3;

/**
 * Batch normalisation over the last (channel) axis, with the layers library's weights, arithmetic
 * and saved form, but a fast training step: where the backend has our `ChannelBatchNormTraining`
 * kernel (wasm, see kernels/batch-norm-training.ts), a training call is that one kernel (batch
 * moments and output in two passes) and its gradient one more; elsewhere it runs the same ops as
 * the library's layer (moments, then batchNorm).
 *
 * Weights, in the library's order and names: gamma and beta (trainable), moving_mean and
 * moving_variance (not trainable, updated by every training call as the library does). Inference
 * uses the moving statistics through the library's batchNorm op. It serialises as the library's
 * `BatchNormalization` (same class name and config), so an exported model loads with plain
 * `tf.loadLayersModel` and predicts the same.
 */
export class ChannelBatchNorm extends tf.layers.Layer {
  static className = 'BatchNormalization';
  readonly momentum: number;
  readonly epsilon: number;
  private gamma: tf.LayerVariable | null = null;
  private beta: tf.LayerVariable | null = null;
  private movingMean: tf.LayerVariable | null = null;
  private movingVariance: tf.LayerVariable | null = null;

  constructor(args: ChannelBatchNormArgs) {
    super({ name: args.name });
    if (!(args.momentum >= 0 && args.momentum < 1)) throw new InternalError(`batch-norm momentum must be in [0, 1), got ${args.momentum}`);
    const epsilon = args.epsilon ?? DEFAULT_EPSILON;
    if (!(epsilon > 0)) throw new InternalError(`batch-norm epsilon must be positive, got ${epsilon}`);
    this.momentum = args.momentum;
    this.epsilon = epsilon;
    this.supportsMasking = true;
  }

  override build(inputShape: tf.Shape | tf.Shape[]): void {
    const shape = (Array.isArray(inputShape[0]) ? inputShape[0] : inputShape) as tf.Shape;
    const channels = shape[shape.length - 1];
    if (channels == null) throw new InternalError(`batch norm needs a known channel (last) axis, got input shape [${shape.join(', ')}]`);
    this.inputSpec = [new tf.InputSpec({ ndim: shape.length, axes: { [shape.length - 1]: channels } })];
    this.gamma = this.addWeight('gamma', [channels], undefined, tf.initializers.ones(), undefined, true);
    this.beta = this.addWeight('beta', [channels], undefined, tf.initializers.zeros(), undefined, true);
    this.movingMean = this.addWeight('moving_mean', [channels], undefined, tf.initializers.zeros(), undefined, false);
    this.movingVariance = this.addWeight('moving_variance', [channels], undefined, tf.initializers.ones(), undefined, false);
    this.built = true;
  }

  override computeOutputShape(inputShape: tf.Shape | tf.Shape[]): tf.Shape | tf.Shape[] {
    return inputShape;
  }

  override call(inputs: tf.Tensor | tf.Tensor[], kwargs: Record<string, unknown>): tf.Tensor {
    return tf.tidy(() => {
      const x = Array.isArray(inputs) ? inputs[0]! : inputs;
      const gamma = this.gamma!.read();
      const beta = this.beta!.read();
      if (kwargs['training'] !== true) return tf.batchNorm(x, this.movingMean!.read(), this.movingVariance!.read(), beta, gamma, this.epsilon);
      const [y, mean, variance] = this.normalizeBatch(x, gamma, beta);
      this.updateMovingAverage(this.movingMean!, mean);
      this.updateMovingAverage(this.movingVariance!, variance);
      return y;
    });
  }

  /** Output, batch mean and batch variance: one kernel of ours where it exists, else the library's ops. */
  private normalizeBatch(x: tf.Tensor, gamma: tf.Tensor, beta: tf.Tensor): [tf.Tensor, tf.Tensor, tf.Tensor] {
    if (tf.getKernel(BATCH_NORM_TRAINING, tf.getBackend())) {
      const attrs = { varianceEpsilon: this.epsilon } as unknown as tf.NamedAttrMap;
      return tf.engine().runKernel(BATCH_NORM_TRAINING, { x, scale: gamma, offset: beta }, attrs) as [tf.Tensor, tf.Tensor, tf.Tensor];
    }
    const axes = x.shape.slice(0, -1).map((_, i) => i);
    const { mean, variance } = tf.moments(x, axes);
    return [tf.batchNorm(x, mean, variance, beta, gamma, this.epsilon), mean, variance];
  }

  /** The library's update: value ← value − (value − batch) · (1 − momentum). */
  private updateMovingAverage(variable: tf.LayerVariable, batch: tf.Tensor): void {
    tf.tidy(() => {
      const value = variable.read();
      variable.write(tf.sub(value, tf.mul(tf.sub(value, batch), 1 - this.momentum)));
    });
  }

  override getConfig(): tf.serialization.ConfigDict {
    const initializer = (className: 'Zeros' | 'Ones') => ({ className, config: {} });
    return {
      axis: -1,
      momentum: this.momentum,
      epsilon: this.epsilon,
      center: true,
      scale: true,
      betaInitializer: initializer('Zeros'),
      gammaInitializer: initializer('Ones'),
      movingMeanInitializer: initializer('Zeros'),
      movingVarianceInitializer: initializer('Ones'),
      betaRegularizer: null,
      gammaRegularizer: null,
      betaConstraint: null,
      gammaConstraint: null,
      ...super.getConfig(),
    };
  }
}
