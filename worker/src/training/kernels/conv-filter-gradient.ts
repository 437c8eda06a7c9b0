import type * as tf from '@tensorflow/tfjs';
import { assertNhwc, filterGradPads, geometry, type ConvGeometry } from './conv-gradients.js';
import { pair, type KernelBackendLike, WasmOpRunner } from './wasm-op-runner.js';
import { directFilterGrad } from './direct-filter-gradient.js';

/** How Conv2DBackpropFilter is computed; `auto` picks per shape (see {@link chooseFilterGradRoute}). */
export type FilterGradRoute = 'auto' | 'direct' | 'transposed-conv' | 'im2col-matmul';

/** Tuning switches, for the benchmark's comparisons. */
export const filterGradOptions: { route: FilterGradRoute } = { route: 'auto' };

/**
 * The route through the backend's own kernels, where our direct kernel (`direct-filter-gradient.ts`,
 * taken first under `auto`) is not available.
 * Measured on whole training steps (worker/bench/ab-step.ts, ENGINE.md): the transposed
 * convolution wins in general; for 1×1 kernels at stride 1 the filter gradient is a plain matrix
 * product x^T · dy, and computing it as one is about 20% faster per step. (Micro-benchmarks that
 * reuse one dy tensor also favour im2col for one to three input channels, but only because the
 * backend then caches its packed copy of dy; in training dy is new every step and that gain
 * disappears.)
 */
export function chooseFilterGradRoute(g: ConvGeometry): Exclude<FilterGradRoute, 'auto' | 'direct'> {
  const stride1 = g.strides[0] === 1 && g.strides[1] === 1;
  return stride1 && g.filterHeight === 1 && g.filterWidth === 1 ? 'im2col-matmul' : 'transposed-conv';
}

/**
 * dW[kh,kw,ci,co] = Σ x[n, oh·s+kh−pt, ow·s+kw−pl, ci] · dy[n, oh, ow, co] as one stride-1
 * convolution: x moved to [Ci, H, W, N] (channels to the batch axis) convolved with dy moved to
 * [OH, OW, N, Co] as the filter, dilation = the layer's stride, padded like the layer; the result
 * [Ci, KH, KW, Co] is transposed to [KH, KW, Ci, Co].
 */
function transposedConv(ops: WasmOpRunner, x: tf.TensorInfo, dy: tf.TensorInfo, g: ConvGeometry): tf.TensorInfo {
  const xT = ops.transpose(x, [3, 1, 2, 0]);
  const dyT = ops.transpose(dy, [1, 2, 0, 3]);
  const conv = ops.conv('Conv2D', xT, dyT, [1, 1], g.strides, filterGradPads(g));
  ops.free(xT, dyT);
  const out = ops.transpose(conv, [1, 2, 0, 3]);
  ops.free(conv);
  return out;
}

/**
 * The same sum as one matrix product, stride 1 only: the patches of x, laid out as
 * [KH·KW·Ci, N·OH·OW] (x moved to [Ci, N, H, W], padded, one slice per kernel tap), times dy as
 * [N·OH·OW, Co], gives dW as [KH·KW·Ci, Co] directly.
 */
function im2colMatmul(ops: WasmOpRunner, x: tf.TensorInfo, dy: tf.TensorInfo, g: ConvGeometry): tf.TensorInfo {
  const { batch: n, inChannels: ci, outHeight: oh, outWidth: ow, filterHeight: kh, filterWidth: kw } = g;
  const co = dy.shape[3]!;
  const pads = filterGradPads(g);
  const xT = ops.transpose(x, [3, 0, 1, 2]);
  let source = xT;
  if (pads.top !== 0 || pads.bottom !== 0 || pads.left !== 0 || pads.right !== 0) {
    // Negative far-side pads (valid padding leaving rows unused) are simply never sliced.
    source = ops.pad(xT, [
      [0, 0],
      [0, 0],
      [pads.top, Math.max(0, pads.bottom)],
      [pads.left, Math.max(0, pads.right)],
    ]);
    ops.free(xT);
  }
  let patches: tf.TensorInfo;
  if (kh === 1 && kw === 1) {
    const one = ops.slice(source, [0, 0, 0, 0], [ci, n, oh, ow]);
    patches = ops.reshape(one, [1, ci, n * oh * ow]);
    ops.free(one);
  } else {
    const taps: tf.TensorInfo[] = [];
    for (let i = 0; i < kh; i++)
      for (let j = 0; j < kw; j++) {
        const tap = ops.slice(source, [0, 0, i, j], [ci, n, oh, ow]);
        taps.push(ops.reshape(tap, [ci, n * oh * ow]));
        ops.free(tap);
      }
    const stacked = ops.run('Concat', taps as unknown as tf.NamedTensorInfoMap, { axis: 0 });
    ops.free(...taps);
    patches = ops.reshape(stacked, [1, kh * kw * ci, n * oh * ow]);
    ops.free(stacked);
  }
  ops.free(source);
  const dy3 = ops.reshape(dy, [1, n * oh * ow, co]);
  const product = ops.run('BatchMatMul', { a: patches, b: dy3 }, { transposeA: false, transposeB: false });
  ops.free(patches, dy3);
  const out = ops.reshape(product, [kh, kw, ci, co]);
  ops.free(product);
  return out;
}

/** Conv2DBackpropFilter for wasm (NHWC, dilation 1). */
export function conv2dBackpropFilter(args: { inputs: tf.NamedTensorInfoMap; backend: unknown; attrs?: tf.NamedAttrMap }): tf.TensorInfo {
  const { x, dy } = args.inputs as { x: tf.TensorInfo; dy: tf.TensorInfo };
  const attrs = (args.attrs ?? {}) as Record<string, unknown>;
  assertNhwc(attrs['dataFormat'], 'Conv2DBackpropFilter');
  const filterShape = attrs['filterShape'] as number[];
  const g = geometry(x.shape, filterShape, pair(attrs['strides'] as number), attrs['pad'], attrs['dimRoundingMode'], false, 'Conv2DBackpropFilter');
  if (filterGradOptions.route === 'auto' || filterGradOptions.route === 'direct') {
    const direct = directFilterGrad(args.backend, x, dy, g);
    if (direct) return direct;
  }
  const ops = new WasmOpRunner(args.backend as KernelBackendLike);
  let route = filterGradOptions.route === 'auto' || filterGradOptions.route === 'direct' ? chooseFilterGradRoute(g) : filterGradOptions.route;
  if (g.strides[0] !== 1 || g.strides[1] !== 1) route = 'transposed-conv';
  return route === 'im2col-matmul' ? im2colMatmul(ops, x, dy, g) : transposedConv(ops, x, dy, g);
}
