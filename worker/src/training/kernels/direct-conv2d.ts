import * as tf from '@tensorflow/tfjs';
import { heapOffset, nativeKernels, type WasmHeapBackend } from './native-kernels.js';

/** Whether forward convolutions go to our WebAssembly kernel (`worker/native/conv2d.c`); for the benchmark's comparisons. */
export const conv2dOptions = { direct: true };

/**
 * Conv2D for wasm: NHWC, dilation 1, float32, eight output channels or more by our kernel, which packs nothing (the backend's
 * operator repacks the filter and rebuilds its indirection buffer for every new filter tensor,
 * i.e. every step in training, and for every flipped filter of an input gradient); everything
 * else by the built-in kernel.
 */
export function makeConv2D(builtIn: tf.KernelFunc): tf.KernelFunc {
  return (args) => {
    const { x, filter } = args.inputs as { x: tf.TensorInfo; filter: tf.TensorInfo };
    const attrs = (args.attrs ?? {}) as { strides?: number | [number, number]; pad?: unknown; dataFormat?: string; dilations?: number | [number, number]; dimRoundingMode?: 'floor' | 'round' | 'ceil' };
    const dilations = attrs.dilations ?? 1;
    const undilated = typeof dilations === 'number' ? dilations === 1 : dilations[0] === 1 && dilations[1] === 1;
    // Fewer than eight output channels fill no block of ours; the backend's operator is faster there.
    const kernels = conv2dOptions.direct && undilated && filter.shape[3]! >= 8 && (attrs.dataFormat ?? 'NHWC') === 'NHWC' && x.dtype === 'float32' && filter.dtype === 'float32' ? nativeKernels(args.backend) : null;
    if (!kernels) return builtIn(args);
    const info = tf.backend_util.computeConv2DInfo(
      x.shape as [number, number, number, number],
      filter.shape as [number, number, number, number],
      attrs.strides ?? 1,
      1,
      attrs.pad as 'same',
      attrs.dimRoundingMode,
    );
    const out = (args.backend as WasmHeapBackend).makeOutput([info.batchSize, info.outHeight, info.outWidth, info.outChannels], 'float32');
    const at = (t: tf.TensorInfo) => heapOffset(args.backend, t);
    const geometry = [info.batchSize, info.inHeight, info.inWidth, info.inChannels, info.outHeight, info.outWidth, info.outChannels] as const;
    kernels.conv2d_forward(at(x), at(filter), at(out), ...geometry, info.filterHeight, info.filterWidth, info.strideHeight, info.strideWidth, info.padInfo.top, info.padInfo.left);
    return out;
  };
}
