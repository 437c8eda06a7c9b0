import * as tf from '@tensorflow/tfjs';
import { heapOffset, nativeKernels } from './native-kernels.js';

/** The part of the wasm backend a heap-level kernel needs. */
interface HeapBackend {
  makeOutput(shape: number[], dtype: tf.DataType): tf.TensorInfo;
  typedArrayFromHeap(info: tf.TensorInfo): Float32Array;
}

/** Whether 2×2/2 windows go to our WebAssembly kernel (`worker/native/max-pool-grad.c`) rather than the JavaScript loop below; for the benchmark's comparisons. */
export const maxPoolGradOptions = { direct: true };

/**
 * MaxPoolGrad for wasm, written as a plain loop over the wasm heap (no copies). The backend's own
 * kernel (tfjs-backend-wasm 4.22) gives wrong gradients for 2×2 windows (found by our cpu-reference
 * test) and is slow; this one routes each output gradient to the first maximum of its window in
 * row-major order, as the cpu backend does, so ties (common after relu) resolve the same way.
 * The common 2×2/2 window reads the forward pass's output (each window's maximum) instead of
 * searching for it, without branches (ENGINE.md: branches on real activations mispredict), in our
 * WebAssembly kernel where it loads, else in JavaScript.
 */
export function maxPoolGrad(args: { inputs: tf.NamedTensorInfoMap; backend: unknown; attrs?: tf.NamedAttrMap }): tf.TensorInfo {
  const { dy, input, output } = args.inputs as { dy: tf.TensorInfo; input: tf.TensorInfo; output?: tf.TensorInfo };
  const attrs = (args.attrs ?? {}) as Record<string, unknown>;
  const info = tf.backend_util.computePool2DInfo(
    input.shape as [number, number, number, number],
    attrs['filterSize'] as [number, number],
    attrs['strides'] as [number, number],
    1,
    attrs['pad'] as 'valid',
    (attrs['dimRoundingMode'] ?? undefined) as 'floor' | undefined,
  );
  const backend = args.backend as HeapBackend;
  const out = backend.makeOutput(input.shape.slice(), 'float32');
  // Views taken after the allocation: a heap growth would detach earlier views.
  const x = backend.typedArrayFromHeap(input);
  const g = backend.typedArrayFromHeap(dy);
  const dx = backend.typedArrayFromHeap(out);
  const { batchSize: n, inHeight: h, inWidth: w, inChannels: c, outHeight: oh, outWidth: ow, strideHeight: sh, strideWidth: sw } = info;
  const fh = info.filterHeight;
  const fw = info.filterWidth;
  const top = info.padInfo.top;
  const left = info.padInfo.left;
  if (output && fh === 2 && fw === 2 && sh === 2 && sw === 2 && top === 0 && left === 0 && oh * 2 <= h && ow * 2 <= w) {
    const kernels = maxPoolGradOptions.direct ? nativeKernels(backend) : null;
    if (kernels) {
      const at = (t: tf.TensorInfo) => heapOffset(backend, t);
      kernels.max_pool_grad_2x2(at(input), at(output), at(dy), at(out), n, h, w, c, oh, ow);
      return out;
    }
    // Every window position is written; an odd last row or column lies outside all windows.
    if (oh * 2 !== h || ow * 2 !== w) dx.fill(0);
    windows2x2(x, backend.typedArrayFromHeap(output), g, dx, n, h, w, c, oh, ow);
    return out;
  }
  dx.fill(0);
  for (let b = 0; b < n; b++) {
    for (let r = 0; r < oh; r++) {
      const r0 = r * sh - top;
      const iLo = Math.max(0, -r0);
      const iHi = Math.min(fh, h - r0);
      for (let q = 0; q < ow; q++) {
        const q0 = q * sw - left;
        const jLo = Math.max(0, -q0);
        const jHi = Math.min(fw, w - q0);
        const gBase = ((b * oh + r) * ow + q) * c;
        // Channel outermost, taps inside: no per-window scratch arrays to reset.
        for (let k = 0; k < c; k++) {
          let best = -Infinity;
          let at = -1;
          for (let i = iLo; i < iHi; i++) {
            let idx = ((b * h + r0 + i) * w + q0 + jLo) * c + k;
            for (let j = jLo; j < jHi; j++, idx += c) {
              const v = x[idx]!;
              if (v > best) {
                best = v;
                at = idx;
              }
            }
          }
          if (at >= 0) dx[at] = dx[at]! + g[gBase + k]!;
        }
      }
    }
  }
  return out;
}

/**
 * The common 2×2, stride-2, unpadded case (windows do not overlap), given the forward output y.
 * Same tie rule: e0..e3 are 1 for the first position in row-major order that equals the window's
 * maximum (the last one when none does, which an exact max never allows) and 0 elsewhere. Unlike
 * the search, a non-finite gradient reaches all four positions (0 × ∞ is NaN); training has
 * diverged by then anyway.
 */
function windows2x2(x: Float32Array, y: Float32Array, g: Float32Array, dx: Float32Array, n: number, h: number, w: number, c: number, oh: number, ow: number): void {
  const row = w * c;
  for (let b = 0; b < n; b++) {
    for (let r = 0; r < oh; r++) {
      for (let q = 0; q < ow; q++) {
        const base = ((b * h + 2 * r) * w + 2 * q) * c;
        const gBase = ((b * oh + r) * ow + q) * c;
        for (let k = 0; k < c; k++) {
          const i0 = base + k;
          const i1 = i0 + c;
          const i2 = i0 + row;
          const i3 = i2 + c;
          const max = y[gBase + k]!;
          const grad = g[gBase + k]!;
          const e0 = +(x[i0] === max);
          const e1 = +(x[i1] === max) * (1 - e0);
          const e2 = +(x[i2] === max) * (1 - e0 - e1);
          dx[i0] = e0 * grad;
          dx[i1] = e1 * grad;
          dx[i2] = e2 * grad;
          dx[i3] = (1 - e0 - e1 - e2) * grad;
        }
      }
    }
  }
}
