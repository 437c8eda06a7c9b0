/**
 * Micro-benchmarks behind the choices in worker/src/training/ENGINE.md. CPU time per call
 * (smallest of several rounds), so load from other processes distorts less. Beware: a kernel
 * called again on the *same* filter tensor reuses the backend's packed copy of it (its operator
 * cache is keyed by filter tensor); in training every filter is new each step, so cases marked
 * "fresh" copy the filter first to measure what training pays.
 *
 *   npx tsx --conditions=source worker/bench/kernel-bench.ts
 */
import * as tf from '@tensorflow/tfjs';
import { initBackend } from '../src/training/backend.js';
import { inputGradOptions } from '../src/training/kernels/conv-gradients.js';
import { setWasmKernelOverride } from '../src/training/kernels/register-wasm-kernels.js';

await initBackend({ prefer: ['wasm'] });
const cpuMs = (f: () => void): number => {
  for (let i = 0; i < 2; i++) f();
  let best = Infinity;
  for (let r = 0; r < 5; r++) {
    const c0 = process.cpuUsage();
    for (let i = 0; i < 5; i++) f();
    const c = process.cpuUsage(c0);
    best = Math.min(best, (c.user + c.system) / 5000);
  }
  return best;
};
const line = (name: string, ms: number, flops = 0) => console.log(`${name.padEnd(58)} ${ms.toFixed(2).padStart(7)} ms${flops ? `  ${(flops / ms / 1e6).toFixed(1).padStart(5)} GFLOP/s` : ''}`);
const kernel = (name: string, inputs: tf.NamedTensorMap, attrs: object) => () => tf.dispose(tf.engine().runKernel(name, inputs, attrs as tf.NamedAttrMap) as tf.Tensor);

console.log('## packing cost of a new filter (Conv2D forward)');
for (const [xs, ks] of [
  [[64, 14, 14, 16], [3, 3, 16, 32]],
  [[1, 30, 30, 64], [28, 28, 64, 16]], // the filter-gradient convolution of ref-cnn's first layer
] as Array<[[number, number, number, number], [number, number, number, number]]>) {
  const x = tf.randomNormal(xs) as tf.Tensor4D;
  const f = tf.randomNormal(ks) as tf.Tensor4D;
  void [x.shape, f.shape];
  line(`conv x[${xs}] f[${ks}] same filter`, cpuMs(() => tf.conv2d(x, f, 1, 'valid').dispose()));
  line(`conv x[${xs}] f[${ks}] fresh filter (copy + pack)`, cpuMs(() => tf.tidy(() => void tf.conv2d(x, f.clone(), 1, 'valid'))));
  line(`  the copy alone`, cpuMs(() => f.clone().dispose()));
}

console.log('## BatchMatMul, 64×784 · 784×256 (2·64·784·256 FLOPs)');
{
  const fl = 2 * 64 * 784 * 256;
  const a = tf.randomNormal([64, 784]);
  const b = tf.randomNormal([784, 256]);
  const dy = tf.randomNormal([64, 256]);
  for (const ours of [false, true]) {
    setWasmKernelOverride('BatchMatMul', ours);
    const who = ours ? 'ours    ' : 'built-in';
    line(`${who} a·b`, cpuMs(() => tf.matMul(a, b).dispose()), fl);
    line(`${who} aᵀ·dy (weight gradient, transposeA)`, cpuMs(() => tf.matMul(a, dy, true, false).dispose()), fl);
    line(`${who} dy·bᵀ (input gradient, transposeB)`, cpuMs(() => tf.matMul(dy, b, false, true).dispose()), fl);
  }
}

console.log('## Conv2DBackpropInput: ours (forward conv of the flipped filter; strided: by phase or over the dilated dy) vs built-in');
for (const [xs, co, k, s, pad] of [
  [[64, 14, 14, 16], 32, 3, 1, 'same'],
  [[64, 14, 14, 16], 32, 1, 1, 'same'],
  [[64, 28, 28, 16], 32, 3, 2, 'same'],
  [[64, 16, 16, 8], 16, 5, 2, 'valid'],
] as Array<[number[], number, number, number, 'same' | 'valid']>) {
  const info = tf.backend_util.computeConv2DInfo(xs as [number, number, number, number], [k, k, xs[3]!, co], s, 1, pad);
  const dy = tf.randomNormal(info.outShape);
  const w = tf.randomNormal([k, k, xs[3]!, co]);
  const fl = 2 * tf.util.sizeFromShape(info.outShape) * k * k * xs[3]!;
  const run = kernel('Conv2DBackpropInput', { dy, filter: w }, { strides: [s, s], pad, dataFormat: 'NHWC', inputShape: xs });
  for (const variant of ['by phase', 'dilated dy', 'built-in'] as const) {
    setWasmKernelOverride('Conv2DBackpropInput', variant !== 'built-in');
    inputGradOptions.byPhase = variant === 'by phase';
    if (s === 1 && variant === 'dilated dy') continue; // the same computation at stride 1
    line(`${variant.padEnd(10)} x[${xs}] co${co} k${k} s${s} ${pad}`, cpuMs(run), fl);
  }
  inputGradOptions.byPhase = true;
  setWasmKernelOverride('Conv2DBackpropInput', true);
}

console.log('## depthwise gradients (ours; wasm has none)');
for (const [xs, k, m, s] of [
  [[64, 14, 14, 16], 3, 1, 1],
  [[64, 28, 28, 8], 5, 2, 2],
] as Array<[number[], number, number, number]>) {
  const info = tf.backend_util.computeConv2DInfo(xs as [number, number, number, number], [k, k, xs[3]!, m], s, 1, 'same', undefined, true);
  const x = tf.randomNormal(xs);
  const dy = tf.randomNormal(info.outShape);
  const w = tf.randomNormal([k, k, xs[3]!, m]);
  const fl = 2 * tf.util.sizeFromShape(info.outShape) * k * k;
  const attrs = { strides: [s, s], pad: 'same', dilations: [1, 1] };
  line(`forward x[${xs}] k${k} m${m} s${s}`, cpuMs(() => tf.depthwiseConv2d(x as tf.Tensor4D, w as tf.Tensor4D, s, 'same').dispose()), fl);
  line(`filter gradient`, cpuMs(kernel('DepthwiseConv2dNativeBackpropFilter', { x, dy }, { ...attrs, filterShape: [k, k, xs[3]!, m] })), fl);
  for (const byPhase of s > 1 ? [true, false] : [false]) {
    inputGradOptions.depthwiseByPhase = byPhase;
    line(`input gradient${s > 1 ? (byPhase ? ' by phase' : ' over dilated dy') : ''}`, cpuMs(kernel('DepthwiseConv2dNativeBackpropInput', { dy, filter: w }, { ...attrs, inputShape: xs })), fl);
  }
  inputGradOptions.depthwiseByPhase = false;
}

console.log('## reading results back (dataSync) on wasm');
{
  const x = tf.randomNormal([64, 28, 28, 1]) as tf.Tensor4D;
  const f = tf.randomNormal([3, 3, 1, 16]) as tf.Tensor4D;
  line('conv 64×28×28×1 → 16 channels (800k outputs), not read', cpuMs(() => tf.conv2d(x, f, 1, 'same').dispose()));
  line('the same, then dataSync of the fresh output', cpuMs(() => tf.tidy(() => void tf.conv2d(x, f, 1, 'same').dataSync())));
  const kept = tf.conv2d(x, f, 1, 'same');
  line('dataSync of an existing 800k tensor', cpuMs(() => void kept.dataSync()));
}

console.log('## Tile [1,1,1,16] → [64,14,14,16] (batch-norm gradients)');
{
  const x = tf.randomNormal([1, 1, 1, 16]);
  for (const ours of [true, false]) {
    setWasmKernelOverride('Tile', ours);
    line(`${ours ? 'ours    ' : 'built-in'}`, cpuMs(() => tf.tile(x, [64, 14, 14, 1]).dispose()));
  }
  setWasmKernelOverride('Tile', true);
}
