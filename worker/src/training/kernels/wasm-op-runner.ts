import * as tf from '@tensorflow/tfjs';
import { InternalError, NetbreederError } from '@netbreeder/shared-types';

/** The slice of the wasm backend our kernels touch: its kernels take and return TensorInfos. */
export type KernelBackendLike = tf.KernelBackend & { disposeData(dataId: tf.DataId, force?: boolean): boolean };

/** The wasm backend's heap as a kernel written in JavaScript uses it: new outputs, and typed views of tensors. */
export interface HeapBackend {
  makeOutput(shape: number[], dtype: tf.DataType): tf.TensorInfo;
  typedArrayFromHeap(info: tf.TensorInfo): Float32Array | Int32Array | Uint8Array;
}

/** Explicit spatial padding in TensorFlow's NHWC layout: `[[0,0],[top,bottom],[left,right],[0,0]]`. */
export type Nhwc4Padding = [[number, number], [number, number], [number, number], [number, number]];

/**
 * Runs existing kernels of one backend directly (no engine, no tape), so a composite kernel can
 * chain them and free every intermediate with `disposeData` as soon as it is consumed. Every
 * TensorInfo a runner method returns is owned by the caller, who must pass it to {@link free}
 * (or return it as the kernel's output).
 */
export class WasmOpRunner {
  constructor(
    readonly backend: KernelBackendLike,
    readonly backendName = 'wasm',
  ) {}

  run(kernelName: string, inputs: tf.NamedTensorInfoMap, attrs: tf.NamedAttrMap): tf.TensorInfo {
    const kernel = tf.getKernel(kernelName, this.backendName);
    if (!kernel) throw new NetbreederError('NB_BACKEND_UNAVAILABLE', `the ${this.backendName} backend has no ${kernelName} kernel; register it before training`);
    const out = kernel.kernelFunc({ inputs, attrs, backend: this.backend });
    if (Array.isArray(out)) throw new InternalError(`${kernelName} returned several outputs where one was expected`);
    return out as tf.TensorInfo;
  }

  free(...infos: tf.TensorInfo[]): void {
    for (const info of infos) this.backend.disposeData(info.dataId);
  }

  transpose(x: tf.TensorInfo, perm: number[]): tf.TensorInfo {
    return this.run('Transpose', { x }, { perm });
  }

  reshape(x: tf.TensorInfo, shape: number[]): tf.TensorInfo {
    return this.run('Reshape', { x }, { shape });
  }

  slice(x: tf.TensorInfo, begin: number[], size: number[]): tf.TensorInfo {
    return this.run('Slice', { x }, { begin, size });
  }

  pad(x: tf.TensorInfo, paddings: Array<[number, number]>): tf.TensorInfo {
    return this.run('PadV2', { x }, { paddings, constantValue: 0 });
  }

  reverse(x: tf.TensorInfo, dims: number[]): tf.TensorInfo {
    return this.run('Reverse', { x }, { dims });
  }

  sum(x: tf.TensorInfo, axis: number[]): tf.TensorInfo {
    return this.run('Sum', { x }, { axis, keepDims: false });
  }

  /**
   * Forward NHWC convolution (regular or depthwise) with padding given per side; a negative side
   * crops the input instead, which is what a negative padding means.
   */
  conv(
    kind: 'Conv2D' | 'DepthwiseConv2dNative',
    x: tf.TensorInfo,
    filter: tf.TensorInfo,
    strides: [number, number],
    dilations: [number, number],
    pads: { top: number; bottom: number; left: number; right: number },
  ): tf.TensorInfo {
    const [n, h, w, c] = x.shape as [number, number, number, number];
    const cropTop = Math.max(0, -pads.top);
    const cropBottom = Math.max(0, -pads.bottom);
    const cropLeft = Math.max(0, -pads.left);
    const cropRight = Math.max(0, -pads.right);
    const cropped = cropTop || cropBottom || cropLeft || cropRight;
    const input = cropped ? this.slice(x, [0, cropTop, cropLeft, 0], [n, h - cropTop - cropBottom, w - cropLeft - cropRight, c]) : x;
    const pad: Nhwc4Padding = [
      [0, 0],
      [Math.max(0, pads.top), Math.max(0, pads.bottom)],
      [Math.max(0, pads.left), Math.max(0, pads.right)],
      [0, 0],
    ];
    try {
      const attrs = { strides, dilations, pad, dataFormat: 'NHWC', dimRoundingMode: null } as unknown as tf.NamedAttrMap;
      return this.run(kind, { x: input, filter }, attrs);
    } finally {
      if (cropped) this.free(input);
    }
  }

  /**
   * Inserts `stride - 1` zeros after every row and column of an NHWC tensor (so a length L becomes
   * L × stride, its last `stride - 1` entries zero): the "stride dilation" of an output gradient.
   */
  dilateSpatial(x: tf.TensorInfo, strides: [number, number]): tf.TensorInfo {
    const [sh, sw] = strides;
    if (sh === 1 && sw === 1) return this.reshape(x, x.shape.slice());
    const [n, h, w, c] = x.shape as [number, number, number, number];
    // Two rank-4 pads (columns, then rows): the backend's rank-6 kernels take a slow general path.
    const cols = this.reshape(x, [n * h, w, 1, c]);
    const colsPadded = this.pad(cols, [
      [0, 0],
      [0, 0],
      [0, sw - 1],
      [0, 0],
    ]);
    this.free(cols);
    const rows = this.reshape(colsPadded, [n, h, 1, w * sw * c]);
    this.free(colsPadded);
    const rowsPadded = this.pad(rows, [
      [0, 0],
      [0, 0],
      [0, sh - 1],
      [0, 0],
    ]);
    this.free(rows);
    const out = this.reshape(rowsPadded, [n, h * sh, w * sw, c]);
    this.free(rowsPadded);
    return out;
  }
}

/** Normalises a `number | [number, number]` attribute. */
export const pair = (v: number | number[] | undefined | null, fallback = 1): [number, number] => {
  if (v == null) return [fallback, fallback];
  if (typeof v === 'number') return [v, v];
  return [v[0] ?? fallback, v[1] ?? v[0] ?? fallback];
};
