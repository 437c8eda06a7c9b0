import type * as tf from '@tensorflow/tfjs';
import type { ConvGeometry } from './conv-gradients.js';
import { heapOffset, nativeKernels, type WasmHeapBackend } from './native-kernels.js';

/**
 * dW ([KH, KW, Ci, Co], a new tensor of the backend) of NHWC x and dy, dilation 1, by our
 * WebAssembly kernel (`worker/native/filter-grad.c`), which packs nothing; null where it is not available.
 */
export function directFilterGrad(backend: unknown, x: tf.TensorInfo, dy: tf.TensorInfo, g: ConvGeometry): tf.TensorInfo | null {
  const kernels = nativeKernels(backend);
  if (!kernels || x.dtype !== 'float32' || dy.dtype !== 'float32') return null;
  const co = dy.shape[3]!;
  const out = (backend as WasmHeapBackend).makeOutput([g.filterHeight, g.filterWidth, g.inChannels, co], 'float32');
  const at = (t: tf.TensorInfo) => heapOffset(backend, t);
  kernels.conv2d_filter_grad(at(x), at(dy), at(out), g.batch, g.inHeight, g.inWidth, g.inChannels, g.outHeight, g.outWidth, co, g.filterHeight, g.filterWidth, g.strides[0], g.strides[1], g.padTop, g.padLeft);
  return out;
}
