import type * as tf from '@tensorflow/tfjs';
import { InternalError } from '@netbreeder/shared-types';
import { heapOffset, nativeKernels } from './native-kernels.js';
import type { HeapBackend } from './wasm-op-runner.js';

/**
 * One Adam update of one weight tensor as a single kernel of ours (wasm only), instead of the
 * ~20 generic kernels (Mul, Add, Square, RealDiv, Sqrt, each a pass over the weights plus the
 * engine's bookkeeping) the library's optimizer runs per weight tensor and step.
 *
 * `NetbreederAdamUpdate`: inputs value, m, v, gradient (float32, one shape); attributes beta1,
 * beta2, oneMinusAccBeta1, oneMinusAccBeta2 (1 − βᵗ, float32 as the optimizer keeps them),
 * epsilon, learningRate. Outputs the new value, m and v (new tensors, so every cache keyed by a
 * tensor, such as the backend's packed matrix operands, sees new weights). The arithmetic is the
 * library's `AdamOptimizer.applyGradients` (see {@link adamUpdate} for the rounding):
 *   m' = m·β1 + g·(1 − β1),  v' = v·β2 + g²·(1 − β2),
 *   value' = (m' / (1 − β1ᵗ)) / (√(v' / (1 − β2ᵗ)) + ε) · (−lr) + value.
 */
export const ADAM_UPDATE = 'NetbreederAdamUpdate';

export interface AdamUpdateAttrs {
  beta1: number;
  beta2: number;
  oneMinusAccBeta1: number;
  oneMinusAccBeta2: number;
  epsilon: number;
  learningRate: number;
}

/**
 * The update itself, on typed arrays (the outputs may not alias the inputs). The step is written
 * with one division and one square root per weight, value' = value + (−lr/(1 − β1ᵗ))·m' /
 * (√v'·(1/√(1 − β2ᵗ)) + ε), computed in float64 and stored as float32: algebraically the library's
 * update, within a few units in the last place of it (the library rounds every operation to float32).
 */
export function adamUpdate(value: Float32Array, m: Float32Array, v: Float32Array, g: Float32Array, a: AdamUpdateAttrs, outValue: Float32Array, outM: Float32Array, outV: Float32Array): void {
  const b1 = Math.fround(a.beta1);
  const b2 = Math.fround(a.beta2);
  const c1 = Math.fround(1 - a.beta1);
  const c2 = Math.fround(1 - a.beta2);
  const step = -Math.fround(a.learningRate) / Math.fround(a.oneMinusAccBeta1);
  const root = 1 / Math.sqrt(Math.fround(a.oneMinusAccBeta2));
  const eps = Math.fround(a.epsilon);
  for (let i = 0; i < value.length; i++) {
    const gi = g[i]!;
    const mi = m[i]! * b1 + gi * c1;
    const vi = v[i]! * b2 + gi * gi * c2;
    outM[i] = mi;
    outV[i] = vi;
    outValue[i] = value[i]! + (step * mi) / (Math.sqrt(vi) * root + eps);
  }
}

/** Where our WebAssembly kernel runs the update (`worker/native/adam-update.c`, float32 SIMD) instead of {@link adamUpdate}; for the benchmark's comparisons. */
export const adamUpdateOptions = { direct: true };

const tfSize = (shape: number[]) => shape.reduce((a, b) => a * b, 1);

/** The kernel on the wasm heap: our WebAssembly kernel where it loads, else {@link adamUpdate} in JavaScript. */
export const adamUpdateKernel: tf.KernelFunc = ({ inputs, attrs, backend }) => {
  const { value, m, v, gradient } = inputs as Record<'value' | 'm' | 'v' | 'gradient', tf.TensorInfo>;
  for (const [name, t] of Object.entries({ m, v, gradient })) {
    if (t.dtype !== 'float32' || t.shape.join() !== value.shape.join()) throw new InternalError(`${ADAM_UPDATE}: ${name} is ${t.dtype} [${t.shape.join(', ')}], the weights float32 [${value.shape.join(', ')}]`);
  }
  const heap = backend as unknown as HeapBackend;
  const outs = [heap.makeOutput(value.shape.slice(), 'float32'), heap.makeOutput(value.shape.slice(), 'float32'), heap.makeOutput(value.shape.slice(), 'float32')] as const;
  const kernels = adamUpdateOptions.direct ? nativeKernels(backend) : null;
  if (kernels) {
    const a = attrs as unknown as AdamUpdateAttrs;
    const at = (t: tf.TensorInfo) => heapOffset(backend, t);
    const f = Math.fround;
    const [b1, b2, c1, c2] = [f(a.beta1), f(a.beta2), f(1 - a.beta1), f(1 - a.beta2)];
    const step = -f(a.learningRate) / f(a.oneMinusAccBeta1);
    kernels.adam_update(at(value), at(m), at(v), at(gradient), at(outs[0]), at(outs[1]), at(outs[2]), tfSize(value.shape), b1, b2, c1, c2, step, 1 / Math.sqrt(f(a.oneMinusAccBeta2)), f(a.epsilon));
    return [...outs];
  }
  // Views after every allocation: an allocation may grow the heap and detach older views.
  const f32 = (t: tf.TensorInfo) => heap.typedArrayFromHeap(t) as Float32Array;
  adamUpdate(f32(value), f32(m), f32(v), f32(gradient), attrs as unknown as AdamUpdateAttrs, f32(outs[0]), f32(outs[1]), f32(outs[2]));
  return [...outs];
};
