import type * as tf from '@tensorflow/tfjs';
import { type KernelBackendLike, WasmOpRunner } from './wasm-op-runner.js';
import { heapOffset, nativeKernels, type WasmHeapBackend } from './native-kernels.js';

/** Whether single products (batch 1) go to our WebAssembly kernels (`worker/native/matmul.c`); for the benchmark's comparisons. */
export const matMulOptions = { direct: true };

/**
 * One product of our WebAssembly kernels, which pack nothing: a·b and aᵀ·b by rows of b scaled by
 * broadcast elements of a, a·bᵀ by dot products of rows. Null (the caller takes the backend's
 * route) where the kernels are not available, for batched products and for aᵀ·bᵀ.
 */
function directProduct(backend: unknown, a: tf.TensorInfo, b: tf.TensorInfo, transposeA: boolean, transposeB: boolean): tf.TensorInfo | null {
  if (!matMulOptions.direct || (transposeA && transposeB) || a.dtype !== 'float32' || b.dtype !== 'float32') return null;
  const batchOf = (t: tf.TensorInfo) => t.shape.slice(0, -2).reduce((p, q) => p * q, 1);
  if (batchOf(a) !== 1 || batchOf(b) !== 1) return null;
  const kernels = nativeKernels(backend);
  if (!kernels) return null;
  const [ar, ac] = a.shape.slice(-2) as [number, number];
  const [br, bc] = b.shape.slice(-2) as [number, number];
  const [m, k] = transposeA ? [ac, ar] : [ar, ac];
  const n = transposeB ? br : bc;
  const rank = Math.max(a.shape.length, b.shape.length);
  const out = (backend as WasmHeapBackend).makeOutput([...Array<number>(rank - 2).fill(1), m, n], 'float32');
  const at = (t: tf.TensorInfo) => heapOffset(backend, t);
  if (transposeB) kernels.matmul_dots(at(a), at(b), at(out), m, k, n);
  else kernels.matmul_rows(at(a), at(b), at(out), m, k, n, transposeA ? 1 : k, transposeA ? m : 1);
  return out;
}

/**
 * BatchMatMul for wasm: a single product by our own kernels ({@link directProduct}); otherwise one
 * that never asks the backend for a transposed operand. The built-in kernel
 * (tfjs-backend-wasm 4.22) runs its fast XNNPACK path only when neither operand is transposed and
 * falls back to a plain loop otherwise: about 1.3 GFLOP/s against 9 to 17 GFLOP/s (measured on
 * 64×784 · 784×256, see ENGINE.md). Every weight and input gradient of a dense layer is such a
 * transposed product, so this kernel transposes the operand explicitly (an O(n²) copy) and calls
 * the built-in kernel untransposed.
 */
export function makeBatchMatMul(builtIn: tf.KernelFunc): tf.KernelFunc {
  return (args) => {
    const attrs = (args.attrs ?? {}) as { transposeA?: boolean; transposeB?: boolean };
    const { a, b } = args.inputs as { a: tf.TensorInfo; b: tf.TensorInfo };
    const direct = directProduct(args.backend, a, b, attrs.transposeA === true, attrs.transposeB === true);
    if (direct) return direct;
    if (!attrs.transposeA && !attrs.transposeB) return builtIn(args);
    const ops = new WasmOpRunner(args.backend as KernelBackendLike);
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
