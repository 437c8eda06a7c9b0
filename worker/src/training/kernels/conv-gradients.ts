import * as tf from '@tensorflow/tfjs';
import { phaseInputGradient } from './phase-input-gradient.js';
import { pair, type KernelBackendLike, WasmOpRunner } from './wasm-op-runner.js';
import { InternalError } from '@netbreeder/shared-types';

/**
 * Convolution gradients written as forward convolutions, for the wasm backend (NHWC, dilation 1).
 *
 * Filter gradient (the "transposed input" route): with x moved to [Ci, H, W, N] (channels to the
 * batch axis, batch to the channel axis) and dy to [OH, OW, N, Co], a stride-1 forward convolution
 * whose dilation equals the layer's stride, padded like the layer, yields [Ci, KH, KW, Co], which
 * one transpose turns into dW [KH, KW, Ci, Co]: dW[kh,kw,ci,co] = Σ x[n, oh·s+kh−pt, ow·s+kw−pl, ci]
 * · dy[n, oh, ow, co].
 *
 * Input gradient: dx is a stride-1 forward convolution of dy with zeros inserted between its rows
 * and columns (stride dilation), padded by KH−1−pt on top, with the spatially flipped,
 * channel-swapped filter W'[kh,kw,co,ci] = W[KH−1−kh, KW−1−kw, ci, co]. At stride > 1 the same
 * sum is computed without the zeros, one convolution per output phase (phase-input-gradient.ts).
 *
 * Depthwise variants do the same with per-channel (depthwise) convolutions and a sum over the
 * batch (filter gradient) or over the channel multiplier (input gradient).
 */

/**
 * How strided input gradients are computed: by output phase (no inserted zeros) or as one
 * convolution of the stride-dilated dy. Measured (worker/bench/kernel-bench.ts): by phase is 2 to
 * 2.5× faster for Conv2D; for depthwise convolutions the odd-sized sub-filters run slowly in the
 * backend and the dilated form is about 1.6× faster. Switchable for the benchmark's comparisons.
 */
export const inputGradOptions: { byPhase: boolean; depthwiseByPhase: boolean } = { byPhase: true, depthwiseByPhase: false };

export interface ConvGeometry {
  batch: number;
  inHeight: number;
  inWidth: number;
  inChannels: number;
  outHeight: number;
  outWidth: number;
  filterHeight: number;
  filterWidth: number;
  strides: [number, number];
  padTop: number;
  padLeft: number;
}

export function geometry(
  inShape: number[],
  filterShape: number[],
  strides: [number, number],
  pad: unknown,
  dimRoundingMode: unknown,
  depthwise: boolean,
  kernelName: string,
): ConvGeometry {
  const info = tf.backend_util.computeConv2DInfo(
    inShape as [number, number, number, number],
    filterShape as [number, number, number, number],
    strides,
    1,
    pad as 'same',
    (dimRoundingMode ?? undefined) as 'floor' | undefined,
    depthwise,
    'channelsLast',
  );
  if (info.dilationHeight !== 1 || info.dilationWidth !== 1) throw new InternalError(`${kernelName}: only dilation 1 is implemented on wasm; use dilation 1`);
  return {
    batch: info.batchSize,
    inHeight: info.inHeight,
    inWidth: info.inWidth,
    inChannels: info.inChannels,
    outHeight: info.outHeight,
    outWidth: info.outWidth,
    filterHeight: info.filterHeight,
    filterWidth: info.filterWidth,
    strides: [info.strideHeight, info.strideWidth],
    padTop: info.padInfo.top,
    padLeft: info.padInfo.left,
  };
}

export const assertNhwc = (dataFormat: unknown, kernelName: string) => {
  if (dataFormat != null && dataFormat !== 'NHWC' && dataFormat !== 'channelsLast') {
    throw new InternalError(`${kernelName} on wasm supports only NHWC (channels last); got ${String(dataFormat)}`);
  }
};

/** Padding of the filter-gradient convolution; the far sides are chosen so exactly KH × KW comes out. */
export function filterGradPads(g: ConvGeometry) {
  const [sh, sw] = g.strides;
  return {
    top: g.padTop,
    left: g.padLeft,
    bottom: g.filterHeight - g.inHeight - g.padTop + (g.outHeight - 1) * sh,
    right: g.filterWidth - g.inWidth - g.padLeft + (g.outWidth - 1) * sw,
  };
}

/** Padding of the input-gradient convolution over the stride-dilated dy (length OH × stride). */
function inputGradPads(g: ConvGeometry) {
  const [sh, sw] = g.strides;
  const top = g.filterHeight - 1 - g.padTop;
  const left = g.filterWidth - 1 - g.padLeft;
  return {
    top,
    left,
    bottom: g.inHeight + g.filterHeight - 1 - g.outHeight * sh - top,
    right: g.inWidth + g.filterWidth - 1 - g.outWidth * sw - left,
  };
}

export function conv2dBackpropInput(args: { inputs: tf.NamedTensorInfoMap; backend: unknown; attrs?: tf.NamedAttrMap }): tf.TensorInfo {
  const { dy, filter } = args.inputs as { dy: tf.TensorInfo; filter: tf.TensorInfo };
  const attrs = (args.attrs ?? {}) as Record<string, unknown>;
  assertNhwc(attrs['dataFormat'], 'Conv2DBackpropInput');
  const inputShape = attrs['inputShape'] as number[];
  const g = geometry(inputShape, filter.shape, pair(attrs['strides'] as number), attrs['pad'], attrs['dimRoundingMode'], false, 'Conv2DBackpropInput');
  const ops = new WasmOpRunner(args.backend as KernelBackendLike);
  const flipAndSwap = (w: tf.TensorInfo) => {
    const flipped = ops.reverse(w, [0, 1]);
    const swapped = ops.transpose(flipped, [0, 1, 3, 2]); // [KH, KW, Co, Ci]
    ops.free(flipped);
    return swapped;
  };
  if (inputGradOptions.byPhase && (g.strides[0] > 1 || g.strides[1] > 1)) {
    return phaseInputGradient(ops, dy, filter, g, 'Conv2D', flipAndSwap, g.inChannels);
  }
  const swapped = flipAndSwap(filter);
  const dilated = ops.dilateSpatial(dy, g.strides);
  const out = ops.conv('Conv2D', dilated, swapped, [1, 1], [1, 1], inputGradPads(g));
  ops.free(dilated, swapped);
  return out;
}

export function depthwiseBackpropFilter(args: { inputs: tf.NamedTensorInfoMap; backend: unknown; attrs?: tf.NamedAttrMap }): tf.TensorInfo {
  const { x, dy } = args.inputs as { x: tf.TensorInfo; dy: tf.TensorInfo };
  const attrs = (args.attrs ?? {}) as Record<string, unknown>;
  assertNhwc(attrs['dataFormat'], 'DepthwiseConv2dNativeBackpropFilter');
  const filterShape = attrs['filterShape'] as number[];
  const [, , channels, multiplier] = filterShape as [number, number, number, number];
  const g = geometry(x.shape, filterShape, pair(attrs['strides'] as number), attrs['pad'], attrs['dimRoundingMode'], true, 'DepthwiseConv2dNativeBackpropFilter');
  if (pair(attrs['dilations'] as number).some((d) => d !== 1)) throw new InternalError('DepthwiseConv2dNativeBackpropFilter: only dilation 1 is implemented on wasm');
  const ops = new WasmOpRunner(args.backend as KernelBackendLike);
  const n = g.batch;
  // x [N, H, W, C] -> [1, H, W, C·N]: every (channel, sample) pair is its own depthwise channel.
  const xT = ops.transpose(x, [1, 2, 3, 0]);
  const xR = ops.reshape(xT, [1, g.inHeight, g.inWidth, channels * n]);
  ops.free(xT);
  // dy [N, OH, OW, C·M] viewed as [N, OH·OW, C, M] -> [OH·OW, C, N, M] = filter [OH, OW, C·N, M].
  // (Rank-4 transposes only: the backend's rank-5 transposes are ~100× slower.)
  const dy4 = ops.reshape(dy, [n, g.outHeight * g.outWidth, channels, multiplier]);
  const dyT = ops.transpose(dy4, [1, 2, 0, 3]);
  ops.free(dy4);
  const dyF = ops.reshape(dyT, [g.outHeight, g.outWidth, channels * n, multiplier]);
  ops.free(dyT);
  const conv = ops.conv('DepthwiseConv2dNative', xR, dyF, [1, 1], g.strides, filterGradPads(g)); // [1, KH, KW, C·N·M]
  ops.free(xR, dyF);
  const conv4 = ops.reshape(conv, [g.filterHeight * g.filterWidth, channels, n, multiplier]);
  ops.free(conv);
  const perSample4 = ops.transpose(conv4, [0, 1, 3, 2]); // [KH·KW, C, M, N]
  ops.free(conv4);
  const perSample = ops.reshape(perSample4, [g.filterHeight, g.filterWidth, channels, multiplier, n]);
  ops.free(perSample4);
  const out = ops.sum(perSample, [4]);
  ops.free(perSample);
  return out;
}

export function depthwiseBackpropInput(args: { inputs: tf.NamedTensorInfoMap; backend: unknown; attrs?: tf.NamedAttrMap }): tf.TensorInfo {
  const { dy, filter } = args.inputs as { dy: tf.TensorInfo; filter: tf.TensorInfo };
  const attrs = (args.attrs ?? {}) as Record<string, unknown>;
  assertNhwc(attrs['dataFormat'], 'DepthwiseConv2dNativeBackpropInput');
  const inputShape = attrs['inputShape'] as number[];
  const [, , channels, multiplier] = filter.shape as [number, number, number, number];
  const g = geometry(inputShape, filter.shape, pair(attrs['strides'] as number), attrs['pad'], attrs['dimRoundingMode'], true, 'DepthwiseConv2dNativeBackpropInput');
  if (pair(attrs['dilations'] as number).some((d) => d !== 1)) throw new InternalError('DepthwiseConv2dNativeBackpropInput: only dilation 1 is implemented on wasm');
  const ops = new WasmOpRunner(args.backend as KernelBackendLike);
  const flipAndFlatten = (w: tf.TensorInfo) => {
    const flipped = ops.reverse(w, [0, 1]);
    const flat = ops.reshape(flipped, [w.shape[0]!, w.shape[1]!, channels * multiplier, 1]);
    ops.free(flipped);
    return flat;
  };
  let conv: tf.TensorInfo; // [N, H, W, C·M]
  if (inputGradOptions.depthwiseByPhase && (g.strides[0] > 1 || g.strides[1] > 1)) {
    conv = phaseInputGradient(ops, dy, filter, g, 'DepthwiseConv2dNative', flipAndFlatten, channels * multiplier);
  } else {
    const flat = flipAndFlatten(filter);
    const dilated = ops.dilateSpatial(dy, g.strides);
    conv = ops.conv('DepthwiseConv2dNative', dilated, flat, [1, 1], [1, 1], inputGradPads(g));
    ops.free(dilated, flat);
  }
  if (multiplier === 1) return conv;
  const conv5 = ops.reshape(conv, [g.batch, g.inHeight, g.inWidth, channels, multiplier]);
  ops.free(conv);
  const out = ops.sum(conv5, [4]);
  ops.free(conv5);
  return out;
}
