import * as tf from '@tensorflow/tfjs';

/** The part of the wasm backend a heap-level kernel needs. */
interface HeapBackend {
  makeOutput(shape: number[], dtype: tf.DataType): tf.TensorInfo;
  typedArrayFromHeap(info: tf.TensorInfo): Float32Array;
}

/**
 * MaxPoolGrad for wasm, written as a plain loop over the wasm heap (no copies). The backend's own
 * kernel (tfjs-backend-wasm 4.22) gives wrong gradients for 2×2 windows (found by our cpu-reference
 * test) and is slow; this one routes each output gradient to the first maximum of its window in
 * row-major order, as the cpu backend does, so ties (common after relu) resolve the same way.
 */
export function maxPoolGrad(args: { inputs: tf.NamedTensorInfoMap; backend: unknown; attrs?: tf.NamedAttrMap }): tf.TensorInfo {
  const { dy, input } = args.inputs as { dy: tf.TensorInfo; input: tf.TensorInfo };
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
  dx.fill(0);
  const { batchSize: n, inHeight: h, inWidth: w, inChannels: c, outHeight: oh, outWidth: ow, strideHeight: sh, strideWidth: sw } = info;
  const fh = info.filterHeight;
  const fw = info.filterWidth;
  const top = info.padInfo.top;
  const left = info.padInfo.left;
  const best = new Float32Array(c);
  const arg = new Int32Array(c);
  for (let b = 0; b < n; b++) {
    for (let r = 0; r < oh; r++) {
      const r0 = r * sh - top;
      for (let q = 0; q < ow; q++) {
        const q0 = q * sw - left;
        best.fill(-Infinity);
        arg.fill(-1);
        for (let i = 0; i < fh; i++) {
          const ir = r0 + i;
          if (ir < 0 || ir >= h) continue;
          for (let j = 0; j < fw; j++) {
            const iq = q0 + j;
            if (iq < 0 || iq >= w) continue;
            const base = ((b * h + ir) * w + iq) * c;
            for (let k = 0; k < c; k++) {
              const v = x[base + k]!;
              if (v > best[k]!) {
                best[k] = v;
                arg[k] = base + k;
              }
            }
          }
        }
        const gBase = ((b * oh + r) * ow + q) * c;
        for (let k = 0; k < c; k++) {
          const a = arg[k]!;
          if (a >= 0) dx[a] = dx[a]! + g[gBase + k]!;
        }
      }
    }
  }
  return out;
}
