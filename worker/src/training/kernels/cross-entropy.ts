import * as tf from '@tensorflow/tfjs';
import { crossEntropy, PROBABILITY_EPSILON } from '../evaluate-model.js';
import type { HeapBackend } from './wasm-op-runner.js';

/**
 * The training loss as two kernels of our own (wasm only), instead of the ~20 generic kernels the
 * composed loss and its gradient take (clip, log, product, sum, mean, negation; then their
 * gradients: a mask from two comparisons, a select, a division, products, broadcasts), each with
 * the engine's per-kernel bookkeeping.
 *
 * Forward `NetbreederCrossEntropy`: inputs probs and targets, both [N, C] float32; output the
 * scalar −(1/N) Σₙ Σ꜀ t·log(clip(p, ε, 1 − ε)), summed in float64.
 *
 * Gradient `NetbreederCrossEntropyGrad`: inputs dy (the scalar's gradient), probs and targets;
 * output dprobs = ((−dy / N) · t) / clip(p), zero where p lies outside [ε, 1 − ε]. Every step is
 * rounded to float32 in the order the composed gradient takes them, so the weights' gradients are
 * the same bits as before; only the logged loss differs (float64 sum, within 1e-6 relative).
 */
export const CROSS_ENTROPY = 'NetbreederCrossEntropy';
export const CROSS_ENTROPY_GRAD = 'NetbreederCrossEntropyGrad';

interface Attrs {
  epsilon: number;
}

const f = Math.fround;

/** The clip's bounds ε and 1 − ε as the float32 values the composed loss compares against. */
function clipBounds(attrs: tf.NamedAttrMap | undefined): { lo: number; hi: number } {
  const { epsilon } = attrs as unknown as Attrs;
  return { lo: f(epsilon), hi: f(1 - epsilon) };
}

function forward(args: { inputs: tf.NamedTensorInfoMap; backend: unknown; attrs?: tf.NamedAttrMap }): tf.TensorInfo {
  const heap = args.backend as HeapBackend;
  const { probs, targets } = args.inputs as { probs: tf.TensorInfo; targets: tf.TensorInfo };
  const { lo, hi } = clipBounds(args.attrs);
  const p = heap.typedArrayFromHeap(probs) as Float32Array;
  const t = heap.typedArrayFromHeap(targets) as Float32Array;
  const rows = probs.shape[0]!;
  let sum = 0;
  for (let i = 0; i < p.length; i++) if (t[i] !== 0) sum += t[i]! * Math.log(Math.min(Math.max(p[i]!, lo), hi));
  const out = heap.makeOutput([], 'float32');
  (heap.typedArrayFromHeap(out) as Float32Array)[0] = -sum / rows;
  return out;
}

function backward(args: { inputs: tf.NamedTensorInfoMap; backend: unknown; attrs?: tf.NamedAttrMap }): tf.TensorInfo {
  const heap = args.backend as HeapBackend;
  const { dy, probs, targets } = args.inputs as { dy: tf.TensorInfo; probs: tf.TensorInfo; targets: tf.TensorInfo };
  const { lo, hi } = clipBounds(args.attrs);
  const p = heap.typedArrayFromHeap(probs) as Float32Array;
  const t = heap.typedArrayFromHeap(targets) as Float32Array;
  // The composed gradient's order: negation, mean (÷ N), product with the targets, division by
  // the clipped probability, then the clip's mask.
  const perRow = f(f(-(heap.typedArrayFromHeap(dy) as Float32Array)[0]!) / probs.shape[0]!);
  const out = heap.makeOutput(probs.shape.slice(), 'float32');
  const g = heap.typedArrayFromHeap(out) as Float32Array;
  for (let i = 0; i < p.length; i++) {
    const v = p[i]!;
    g[i] = v >= lo && v <= hi ? f(f(perRow * t[i]!) / v) : 0;
  }
  return out;
}

export const crossEntropyKernel = forward as unknown as tf.KernelFunc;
export const crossEntropyGradKernel = backward as unknown as tf.KernelFunc;

export const crossEntropyGradConfig: tf.GradConfig = {
  kernelName: CROSS_ENTROPY,
  inputsToSave: ['probs', 'targets'],
  gradFunc: (dy, saved, attrs) => {
    const [probs, targets] = saved as [tf.Tensor, tf.Tensor];
    const epsilon = (attrs as unknown as Attrs).epsilon;
    return {
      probs: () => tf.engine().runKernel(CROSS_ENTROPY_GRAD, { dy: dy as tf.Tensor, probs, targets }, attrs) as tf.Tensor,
      // Targets are data, never trained; for completeness, −(dy / N)·log(clip(p)).
      targets: () => tf.mul(tf.div(tf.neg(dy as tf.Tensor), probs.shape[0]!), tf.log(tf.clipByValue(probs, epsilon, 1 - epsilon))),
    };
  },
};

/**
 * The training loss: our kernel where the current backend has it, else the composed
 * {@link crossEntropy} (same gradients either way). Validation keeps the composed loss, whose value
 * early stopping compares across epochs.
 */
export function trainingCrossEntropy(probs: tf.Tensor, targets: tf.Tensor): tf.Scalar {
  if (!tf.getKernel(CROSS_ENTROPY, tf.getBackend())) return crossEntropy(probs, targets);
  return tf.engine().runKernel(CROSS_ENTROPY, { probs, targets }, { epsilon: PROBABILITY_EPSILON } as unknown as tf.NamedAttrMap) as tf.Scalar;
}
