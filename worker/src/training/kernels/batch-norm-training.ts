import * as tf from '@tensorflow/tfjs';
import { InternalError } from '@netbreeder/shared-types';
import type { HeapBackend } from './wasm-op-runner.js';

/**
 * Batch normalisation in training mode as two kernels of our own (wasm only), instead of the
 * ~30 generic kernels the layers library composes it from (moments, FusedBatchNorm, and the
 * gradients of Mean, Sub, Square and FusedBatchNorm: transposed reductions, tiles, broadcast
 * products). The channel is the last axis; x is read as [rows, C] whatever its rank.
 *
 * Forward `ChannelBatchNormTraining`: inputs x, scale (gamma), offset (beta), all float32, scale and
 * offset [C]; attribute varianceEpsilon. Outputs y (x's shape), the batch mean [C] and the batch's
 * biased variance [C]: one pass for the moments, one for y.
 *
 * Gradient `ChannelBatchNormTrainingGrad`: inputs dy, x, mean, variance, scale, and dmean and
 * dvariance (gradients reaching the mean and variance outputs; zeros in training, where those
 * only feed the moving averages); outputs dx, dscale, doffset: one pass for the per-channel sums,
 * one for dx. Sums are accumulated in float64.
 */
export const BATCH_NORM_TRAINING = 'ChannelBatchNormTraining';
export const BATCH_NORM_TRAINING_GRAD = 'ChannelBatchNormTrainingGrad';

interface Attrs {
  varianceEpsilon: number;
}

/**
 * Every loop below walks x in blocks of whole rows (about 16 KiB, so a block stays in the first-level
 * cache) and, within a block, one channel at a time with its accumulators in locals: 2 to 3.5× faster
 * than one pass that cycles through the channels with per-channel accumulator arrays (measured on
 * [64, 28, 28, 16]: moments 2.5 → 0.7 ms, output 2.9 → 1.2 ms).
 */
const BLOCK_ELEMENTS = 4096;
const blockLength = (channels: number) => Math.max(1, Math.floor(BLOCK_ELEMENTS / channels)) * channels;

/**
 * Per-channel mean and biased variance of `x` read as [rows, C]. Values are accumulated relative
 * to the first row (a shift that keeps E[v²] − E[v]² free of cancellation), in float64.
 */
export function channelMoments(x: Float32Array, channels: number, mean: Float32Array, variance: Float32Array): void {
  const rows = x.length / channels;
  const sum = new Float64Array(channels);
  const squares = new Float64Array(channels);
  const block = blockLength(channels);
  for (let start = 0; start < x.length; start += block) {
    const end = Math.min(x.length, start + block);
    for (let c = 0; c < channels; c++) {
      const shift = x[c]!;
      let s = 0;
      let q = 0;
      for (let i = start + c; i < end; i += channels) {
        const v = x[i]! - shift;
        s += v;
        q += v * v;
      }
      sum[c] = sum[c]! + s;
      squares[c] = squares[c]! + q;
    }
  }
  for (let c = 0; c < channels; c++) {
    const m = sum[c]! / rows;
    mean[c] = x[c]! + m;
    variance[c] = Math.max(0, squares[c]! / rows - m * m);
  }
}

/** y = (x − mean) · scale / √(variance + ε) + offset, per channel of the last axis. */
export function normalize(x: Float32Array, mean: Float32Array, variance: Float32Array, scale: Float32Array, offset: Float32Array, epsilon: number, y: Float32Array): void {
  const channels = mean.length;
  const block = blockLength(channels);
  for (let start = 0; start < x.length; start += block) {
    const end = Math.min(x.length, start + block);
    for (let c = 0; c < channels; c++) {
      const m = mean[c]!;
      const factor = scale[c]! / Math.sqrt(variance[c]! + epsilon);
      const o = offset[c]!;
      for (let i = start + c; i < end; i += channels) y[i] = (x[i]! - m) * factor + o;
    }
  }
}

/** The tensors the gradient kernel reads, as typed arrays (dmean, dvariance: gradients reaching those outputs). */
export interface BatchNormGradInputs {
  dy: Float32Array;
  x: Float32Array;
  mean: Float32Array;
  variance: Float32Array;
  scale: Float32Array;
  dmean: Float32Array;
  dvariance: Float32Array;
}

/**
 * Gradients of y, mean and variance above with respect to x, scale and offset. With
 * s = 1/√(variance + ε) and M rows:
 * dx = scale·s·dy − scale·s·Σdy/M − (x − mean)·scale·s³·Σ(dy·(x − mean))/M + dmean/M + 2·dvariance·(x − mean)/M,
 * dscale = s·Σ(dy·(x − mean)), doffset = Σdy.
 */
export function normalizeGradient(input: BatchNormGradInputs, epsilon: number, dx: Float32Array, dscale: Float32Array, doffset: Float32Array): void {
  const { dy, x, mean } = input;
  const channels = mean.length;
  const rows = x.length / channels;
  const block = blockLength(channels);
  const sumDy = new Float64Array(channels);
  const sumDyCentred = new Float64Array(channels);
  for (let start = 0; start < x.length; start += block) {
    const end = Math.min(x.length, start + block);
    for (let c = 0; c < channels; c++) {
      const m = mean[c]!;
      let s = 0;
      let sc = 0;
      for (let i = start + c; i < end; i += channels) {
        const g = dy[i]!;
        s += g;
        sc += g * (x[i]! - m);
      }
      sumDy[c] = sumDy[c]! + s;
      sumDyCentred[c] = sumDyCentred[c]! + sc;
    }
  }
  const perDy = new Float64Array(channels);
  const perCentred = new Float64Array(channels);
  const constant = new Float64Array(channels);
  for (let c = 0; c < channels; c++) {
    const s = 1 / Math.sqrt(input.variance[c]! + epsilon);
    const a = input.scale[c]! * s;
    perDy[c] = a;
    perCentred[c] = (-a * s * s * sumDyCentred[c]! + 2 * input.dvariance[c]!) / rows;
    constant[c] = (-a * sumDy[c]! + input.dmean[c]!) / rows;
    dscale[c] = s * sumDyCentred[c]!;
    doffset[c] = sumDy[c]!;
  }
  for (let start = 0; start < x.length; start += block) {
    const end = Math.min(x.length, start + block);
    for (let c = 0; c < channels; c++) {
      const m = mean[c]!;
      const a = perDy[c]!;
      const b = perCentred[c]!;
      const k = constant[c]!;
      for (let i = start + c; i < end; i += channels) dx[i] = a * dy[i]! + (x[i]! - m) * b + k;
    }
  }
}

function checkInputs(kernel: string, x: tf.TensorInfo, named: Record<string, tf.TensorInfo>): number {
  const channels = x.shape[x.shape.length - 1];
  if (x.shape.length < 2 || channels == null || channels === 0) throw new InternalError(`${kernel}: x must have rank ≥ 2 and a non-empty last (channel) axis, got shape [${x.shape.join(', ')}]`);
  for (const [name, t] of Object.entries(named)) {
    if (t.dtype !== 'float32') throw new InternalError(`${kernel}: ${name} must be float32, got ${t.dtype}`);
    const expected = name === 'dy' || name === 'x' ? x.shape : [channels];
    if (!tf.util.arraysEqual(t.shape, expected)) throw new InternalError(`${kernel}: ${name} must have shape [${expected.join(', ')}], got [${t.shape.join(', ')}]`);
  }
  return channels;
}

/** The forward kernel on the wasm heap. */
export const batchNormTraining: tf.KernelFunc = ({ inputs, attrs, backend }) => {
  const { x, scale, offset } = inputs as { x: tf.TensorInfo; scale: tf.TensorInfo; offset: tf.TensorInfo };
  const channels = checkInputs(BATCH_NORM_TRAINING, x, { x, scale, offset });
  const heap = backend as unknown as HeapBackend;
  const y = heap.makeOutput(x.shape.slice(), 'float32');
  const mean = heap.makeOutput([channels], 'float32');
  const variance = heap.makeOutput([channels], 'float32');
  // Views after every allocation: an allocation may grow the heap and detach older views.
  const f32 = (t: tf.TensorInfo) => heap.typedArrayFromHeap(t) as Float32Array;
  const [xs, means, variances] = [f32(x), f32(mean), f32(variance)];
  if (xs.length === 0) throw new InternalError(`${BATCH_NORM_TRAINING}: x is empty (shape [${x.shape.join(', ')}]); a batch needs at least one sample`);
  channelMoments(xs, channels, means, variances);
  normalize(xs, means, variances, f32(scale), f32(offset), (attrs as unknown as Attrs).varianceEpsilon, f32(y));
  return [y, mean, variance];
};

/** The gradient kernel on the wasm heap. */
export const batchNormTrainingGrad: tf.KernelFunc = ({ inputs, attrs, backend }) => {
  const named = inputs as Record<keyof BatchNormGradInputs, tf.TensorInfo>;
  const channels = checkInputs(BATCH_NORM_TRAINING_GRAD, named.x, named);
  const heap = backend as unknown as HeapBackend;
  const dx = heap.makeOutput(named.x.shape.slice(), 'float32');
  const dscale = heap.makeOutput([channels], 'float32');
  const doffset = heap.makeOutput([channels], 'float32');
  const f32 = (t: tf.TensorInfo) => heap.typedArrayFromHeap(t) as Float32Array;
  const arrays = Object.fromEntries(Object.entries(named).map(([k, t]) => [k, f32(t)])) as unknown as BatchNormGradInputs;
  normalizeGradient(arrays, (attrs as unknown as Attrs).varianceEpsilon, f32(dx), f32(dscale), f32(doffset));
  return [dx, dscale, doffset];
};

/**
 * The gradient of {@link BATCH_NORM_TRAINING}, for the engine's tape: one run of the gradient
 * kernel gives all three input gradients.
 */
export const batchNormTrainingGradConfig: tf.GradConfig = {
  kernelName: BATCH_NORM_TRAINING,
  inputsToSave: ['x', 'scale'],
  outputsToSave: [false, true, true],
  gradFunc: (dys, saved, attrs) => {
    const [dy, dmean, dvariance] = dys as tf.Tensor[];
    const [x, scale, mean, variance] = saved as [tf.Tensor, tf.Tensor, tf.Tensor, tf.Tensor];
    const [dx, dscale, doffset] = tf.engine().runKernel(BATCH_NORM_TRAINING_GRAD, { dy: dy!, x, mean, variance, scale, dmean: dmean!, dvariance: dvariance! }, attrs) as tf.Tensor[];
    return { x: () => dx!, scale: () => dscale!, offset: () => doffset! };
  },
};
