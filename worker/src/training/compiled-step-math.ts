import { PROBABILITY_EPSILON } from './evaluate-model.js';
import type { Activation } from '@netbreeder/shared-types';

/**
 * The element-wise arithmetic of the compiled dense step (compiled-dense-step.ts): activations
 * and their gradients, bias, softmax, and the losses with their gradients, on plain float32
 * arrays, rounded as the backend's kernels and the library's gradient formulas round them. Pure.
 */

/** Activations whose derivative needs the activation's input, not only its output: a dense layer with one of these keeps its pre-activations. */
export const NEEDS_INPUT: ReadonlySet<Activation> = new Set<Activation>(['selu', 'swish']);

/** The library's SELU constants (tfjs-core's selu_util). */
const SELU_SCALE = 1.0507009873554804934193349852946;
const SELU_SCALE_ALPHA = 1.7580993408473768599402175208123;

export const f = Math.fround;

const logistic = (v: number) => f(1 / (1 + Math.exp(-v)));

/** The activation of one element (stored as float32 by the caller). */
export function activate(a: Activation, v: number): number {
  switch (a) {
    case 'relu':
      return v > 0 ? v : 0;
    case 'relu6':
      return Math.min(Math.max(v, 0), 6);
    case 'elu':
      return v >= 0 ? v : Math.exp(v) - 1;
    case 'selu':
      return v > 0 ? SELU_SCALE * v : SELU_SCALE_ALPHA * (Math.exp(v) - 1);
    case 'tanh':
      return Math.tanh(v);
    case 'sigmoid':
      return 1 / (1 + Math.exp(-v));
    case 'swish':
      return logistic(v) * v;
    case 'linear':
      return v;
  }
}

/**
 * The incoming gradient `g` times the activation's derivative at the element whose input is `x`
 * and output `y` (`x` is read only for {@link NEEDS_INPUT}), as the library's gradient formulas
 * compute it: relu and relu6 by masks of the output, elu, tanh and sigmoid from the output, selu from the input,
 * swish (x·σ(x)) as the sum of its product's two gradients.
 */
export function backActivate(a: Activation, x: number, y: number, g: number): number {
  switch (a) {
    case 'relu':
      return y > 0 ? g : 0;
    case 'relu6':
      // The layers library's relu6 is min(6, relu(x)): at 6 the minimum's gradient goes to the constant.
      return y > 0 && y < 6 ? g : 0;
    case 'elu':
      return y >= 0 ? g : f(g * f(y + 1));
    case 'selu':
      return x > 0 ? f(g * f(SELU_SCALE)) : f(f(g * f(SELU_SCALE_ALPHA)) * f(Math.exp(x)));
    case 'tanh':
      return f(g * f(1 - f(y * y)));
    case 'sigmoid':
      return f(g * f(y * f(1 - y)));
    case 'swish': {
      const s = logistic(x);
      return f(f(g * s) + f(f(g * x) * f(s * f(1 - s))));
    }
    case 'linear':
      return g;
  }
}

/** `y` [size, n] plus `bias` on every row, then the activation, in place (relu in its own loop: it is the common case). */
export function addBiasAndActivate(y: Float32Array, bias: Float32Array, size: number, n: number, a: Activation): void {
  for (let r = 0, o = 0; r < size; r++, o += n) {
    if (a === 'relu') {
      // The sum's sign survives its rounding to float32, so the comparison may read the unrounded sum.
      for (let j = 0; j < n; j++) {
        const v = y[o + j]! + bias[j]!;
        y[o + j] = v > 0 ? v : 0;
      }
    } else if (a === 'linear') for (let j = 0; j < n; j++) y[o + j] = y[o + j]! + bias[j]!;
    else for (let j = 0; j < n; j++) y[o + j] = activate(a, f(y[o + j]! + bias[j]!));
  }
}

/** Row `r` of `y` (logits, at `offset`) plus `bias`, replaced by its softmax: exp(z − max) / Σ exp(z − max). */
export function softmaxRow(y: Float32Array, offset: number, n: number, bias: Float32Array): void {
  let max = -Infinity;
  for (let c = 0; c < n; c++) {
    const z = f(y[offset + c]! + bias[c]!);
    y[offset + c] = z;
    if (z > max) max = z;
  }
  let total = 0;
  for (let c = 0; c < n; c++) {
    const e = f(Math.exp(y[offset + c]! - max));
    y[offset + c] = e;
    total += e;
  }
  const sum = f(total);
  for (let c = 0; c < n; c++) y[offset + c] = f(y[offset + c]! / sum);
}

/**
 * The batch's mean cross-entropy (probabilities clipped to [ε, 1 − ε], as the training loss)
 * and its count of correct answers; writes the loss's gradient with respect to the head's logits into `dz`:
 * the loss kernel's gradient of the probabilities, then the softmax's.
 */
export function crossEntropyAndGradient(p: Float32Array, t: Float32Array, labels: Int32Array, size: number, classes: number, dz: Float32Array): { loss: number; tally: number } {
  const lo = f(PROBABILITY_EPSILON);
  const hi = f(1 - PROBABILITY_EPSILON);
  const perRow = f(f(-1) / size);
  let sum = 0;
  let correct = 0;
  for (let r = 0; r < size; r++) {
    const o = r * classes;
    let best = 0;
    let dot = 0;
    for (let c = 0; c < classes; c++) {
      const v = p[o + c]!;
      const target = t[o + c]!;
      if (v > p[o + best]!) best = c;
      if (target !== 0) sum += target * Math.log(Math.min(Math.max(v, lo), hi));
      const dp = v >= lo && v <= hi ? f(f(perRow * target) / v) : 0;
      dz[o + c] = dp;
      dot += dp * v;
    }
    if (best === labels[r]) correct++;
    // The softmax's gradient: (dp − Σ dp·p) · p.
    const s = f(dot);
    for (let c = 0; c < classes; c++) dz[o + c] = f(f(dz[o + c]! - s) * p[o + c]!);
  }
  return { loss: -sum / size, tally: correct };
}

/**
 * A regression batch's loss, the mean squared error or the Huber loss with δ = 1 (as
 * `tf.losses.huberLoss`: ½e² within δ, δ(|e| − ½δ) beyond), and its sum of squared errors;
 * writes the loss's gradient with respect to the one-unit head's output into `dz`.
 */
export function regressionLossAndGradient(kind: 'squared' | 'huber', out: Float32Array, t: Float32Array, size: number, dz: Float32Array): { loss: number; tally: number } {
  const perSample = f(1 / size);
  let sum = 0;
  let squares = 0;
  for (let i = 0; i < size; i++) {
    const e = f(out[i]! - t[i]!);
    squares += e * e;
    if (kind === 'squared') {
      sum += e * e;
      dz[i] = f(perSample * f(2 * e));
    } else {
      const a = Math.abs(e);
      const q = Math.min(a, 1);
      sum += 0.5 * q * q + (a - q);
      dz[i] = f(perSample * (a <= 1 ? e : Math.sign(e)));
    }
  }
  return { loss: sum / size, tally: squares };
}
