import * as tf from '@tensorflow/tfjs';
import { heapOffset, nativeKernels, type WasmHeapBackend } from './native-kernels.js';

/** Whether Sums over leading axes go to our WebAssembly kernel (`worker/native/leading-sum.c`); for the benchmark's comparisons. */
export const leadingSumOptions = { direct: true };

/**
 * Sum for wasm: a float32 sum over a tensor's leading axes (every bias gradient: dy summed over
 * batch, height and width) by our kernel, which reads the tensor once in memory order and adds in
 * float64; every other Sum by the built-in kernel, which moves the summed axes innermost first (a
 * transpose of the whole tensor).
 */
export function makeSum(builtIn: tf.KernelFunc): tf.KernelFunc {
  return (args) => {
    const { x } = args.inputs as { x: tf.TensorInfo };
    const attrs = (args.attrs ?? {}) as { axis?: number | number[]; keepDims?: boolean };
    return leadingSum(args.backend, x, attrs.axis ?? [], attrs.keepDims === true) ?? builtIn(args);
  };
}

function leadingSum(backend: unknown, x: tf.TensorInfo, axis: number | number[], keepDims: boolean): tf.TensorInfo | null {
  const rank = x.shape.length;
  if (!leadingSumOptions.direct || x.dtype !== 'float32' || rank < 2) return null;
  const axes = tf.util.parseAxisParam(axis, x.shape).sort((a, b) => a - b);
  const k = axes.length;
  if (k === 0 || k >= rank || axes.some((a, i) => a !== i)) return null;
  const rows = x.shape.slice(0, k).reduce((p, q) => p * q, 1);
  const cols = x.shape.slice(k).reduce((p, q) => p * q, 1);
  const kernels = nativeKernels(backend);
  if (!kernels || rows === 0 || cols === 0) return null;
  const heap = backend as WasmHeapBackend & { disposeData(id: tf.DataId): boolean };
  const out = heap.makeOutput(keepDims ? [...Array<number>(k).fill(1), ...x.shape.slice(k)] : x.shape.slice(k), 'float32');
  const scratch = heap.makeOutput([cols * 2], 'float32'); // cols float64 accumulators
  kernels.leading_sum(heapOffset(backend, x), heapOffset(backend, out), heapOffset(backend, scratch), rows, cols);
  heap.disposeData(scratch.dataId);
  return out;
}
