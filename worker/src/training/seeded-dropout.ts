import * as tf from '@tensorflow/tfjs';
import { InternalError, createRandom, restoreRandom, type Random, type RandomState } from '@netbreeder/shared-types';

/** Arguments of {@link SeededDropout}. */
export interface SeededDropoutArgs {
  /** Fraction of inputs set to zero while training, in [0, 1). */
  rate: number;
  /** Seeds the sequence of masks: each training call draws the next mask of that sequence. */
  seed: number;
  name?: string;
}

/**
 * Dropout whose masks come from our own seeded sequence. TensorFlow.js's Dropout either uses an
 * unseeded generator (not reproducible) or, given a seed, draws the *same* mask on every call.
 * This layer draws a fresh mask per training call, from a generator seeded by `seed`.
 *
 * It serialises as the library's own `Dropout` (same class name and config fields, seed left
 * out), so an exported model loads with plain `tf.loadLayersModel`; at inference both are identity.
 */
export class SeededDropout extends tf.layers.Layer {
  static className = 'Dropout';
  readonly rate: number;
  private random: Random;
  /** Scratch for a mask's uniform draws, grown to the largest mask so far. */
  private uniforms = new Float64Array(0);

  constructor(args: SeededDropoutArgs) {
    super({ name: args.name });
    if (!(args.rate >= 0 && args.rate < 1)) throw new InternalError(`dropout rate must be in [0, 1), got ${args.rate}`);
    this.rate = args.rate;
    this.random = createRandom(`dropout ${args.seed}`);
    this.supportsMasking = true;
  }

  /**
   * Writes the next training call's mask into the first `count` elements of `multipliers`: each
   * element kept with probability 1 − rate and scaled by 1 / (1 − rate) (float32), else 0, one
   * draw of this layer's sequence per element. The layer's own call uses it, and so does a
   * compiled step on its behalf (compiled-dense-step.ts), so both train with the same masks.
   * Drawn in JavaScript from our seeded generator: `tf.dropout` with a seed draws through
   * `tf.randomUniform` and four more kernels.
   */
  fillMask(multipliers: Float32Array, count: number): void {
    const scale = Math.fround(1 / Math.fround(1 - this.rate));
    if (this.uniforms.length < count) this.uniforms = new Float64Array(count);
    this.random.fillUniform(this.uniforms, count);
    for (let i = 0; i < count; i++) multipliers[i] = this.uniforms[i]! >= this.rate ? scale : 0;
  }

  /** The mask source's state, for a training checkpoint. */
  randomState(): RandomState {
    return this.random.state();
  }

  /** Continues the mask sequence of a checkpointed training. */
  restoreRandomState(state: RandomState): void {
    this.random = restoreRandom(state);
  }

  override computeOutputShape(inputShape: tf.Shape | tf.Shape[]): tf.Shape | tf.Shape[] {
    return inputShape;
  }

  override call(inputs: tf.Tensor | tf.Tensor[], kwargs: Record<string, unknown>): tf.Tensor {
    return tf.tidy(() => {
      const input = Array.isArray(inputs) ? inputs[0]! : inputs;
      if (kwargs['training'] !== true || this.rate === 0) return input.clone();
      const multipliers = new Float32Array(input.size);
      this.fillMask(multipliers, input.size);
      return tf.mul(input, tf.tensor(multipliers, input.shape, 'float32'));
    });
  }

  override getConfig(): tf.serialization.ConfigDict {
    return { ...super.getConfig(), rate: this.rate, noiseShape: null, seed: null };
  }
}
