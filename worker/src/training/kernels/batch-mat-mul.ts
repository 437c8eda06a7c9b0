import type * as tf from '@tensorflow/tfjs';
import { type KernelBackendLike, WasmOpRunner } from './wasm-op-runner.js';

/**
 * BatchMatMul for wasm that never asks the backend for a transposed operand. The built-in kernel
 * (tfjs-backend-wasm 4.22) runs its fast XNNPACK path only when neither operand is transposed and
 * falls back to a plain loop otherwise: about 1.3 GFLOP/s against 9 to 17 GFLOP/s (measured on
 * 64×784 · 784×256, see ENGINE.md). Every weight and input gradient of a dense layer is such a
 * transposed product, so this kernel transposes the operand explicitly (an O(n²) copy) and calls
 * the built-in kernel untransposed.
 */
export function makeBatchMatMul(builtIn: tf.KernelFunc): tf.KernelFunc {
  return (args) => {
    const attrs = (args.attrs ?? {}) as { transposeA?: boolean; transposeB?: boolean };
    if (!attrs.transposeA && !attrs.transposeB) return builtIn(args);
    const ops = new WasmOpRunner(args.backend as KernelBackendLike);
    const { a, b } = args.inputs as { a: tf.TensorInfo; b: tf.TensorInfo };
    const swapLast = (t: tf.TensorInfo) => {
      const perm = t.shape.map((_, i) => i);
      const r = perm.length;
      [perm[r - 2], perm[r - 1]] = [perm[r - 1]!, perm[r - 2]!];
      return ops.transpose(t, perm);
    };
    const aT = attrs.transposeA ? swapLast(a) : a;
    const bT = attrs.transposeB ? swapLast(b) : b;
    try {
      return builtIn({ ...args, inputs: { a: aT, b: bT }, attrs: { ...args.attrs, transposeA: false, transposeB: false } });
    } finally {
      if (aT !== a) ops.free(aT);
      if (bT !== b) ops.free(bT);
    }
  };
}
