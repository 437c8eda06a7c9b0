/**
 * Pixel arithmetic of the image importer, pure: channel conversion, scaling to [0, 1] and resizing
 * (area averaging or bilinear interpolation), written into the sample layout the model reads
 * ([height, width, channels], row-major, channels interleaved).
 */

/** How to turn one decoded image into a model sample. */
export interface PixelTarget {
  width: number;
  height: number;
  /** 1: luma 0.299 R + 0.587 G + 0.114 B (ITU-R BT.601); 3: R, G, B. */
  channels: 1 | 3;
  /** `area`: each target pixel averages the source area it covers; `bilinear`: interpolates between the 4 nearest source pixels. */
  method: 'area' | 'bilinear';
}

/** One axis of a separable resize: for target index t, source taps `index[t*k + j]` with `weight[t*k + j]`. */
interface AxisTaps {
  taps: number;
  index: Int32Array;
  weight: Float32Array;
}

/**
 * Writes the image (`rgba`: 4 bytes per pixel, row-major, `srcWidth` × `srcHeight`) into `out` at
 * `offset` as `target.height × target.width × target.channels` values in [0, 1]. Alpha is ignored.
 */
export function writeModelPixels(rgba: Uint8Array, srcWidth: number, srcHeight: number, target: PixelTarget, out: Float32Array, offset: number): void {
  const { width, height, channels } = target;
  const planes = channelPlanes(rgba, srcWidth * srcHeight, channels);
  if (srcWidth === width && srcHeight === height) {
    for (let p = 0; p < width * height; p++) for (let c = 0; c < channels; c++) out[offset + p * channels + c] = planes[c]![p]!;
    return;
  }
  const xs = axisTaps(srcWidth, width, target.method);
  const ys = axisTaps(srcHeight, height, target.method);
  const rows = new Float32Array(srcHeight * width);
  for (let c = 0; c < channels; c++) {
    const plane = planes[c]!;
    // Horizontal pass: every source row to the target width.
    for (let y = 0; y < srcHeight; y++) {
      const row = y * srcWidth;
      for (let x = 0; x < width; x++) {
        let v = 0;
        for (let j = 0; j < xs.taps; j++) v += plane[row + xs.index[x * xs.taps + j]!]! * xs.weight[x * xs.taps + j]!;
        rows[y * width + x] = v;
      }
    }
    // Vertical pass into the output.
    for (let y = 0; y < height; y++) {
      for (let x = 0; x < width; x++) {
        let v = 0;
        for (let j = 0; j < ys.taps; j++) v += rows[ys.index[y * ys.taps + j]! * width + x]! * ys.weight[y * ys.taps + j]!;
        out[offset + (y * width + x) * channels + c] = v;
      }
    }
  }
}

/** The image as `channels` planes of values in [0, 1]. */
function channelPlanes(rgba: Uint8Array, pixels: number, channels: 1 | 3): Float32Array[] {
  if (channels === 1) {
    const gray = new Float32Array(pixels);
    for (let p = 0; p < pixels; p++) gray[p] = (0.299 * rgba[p * 4]! + 0.587 * rgba[p * 4 + 1]! + 0.114 * rgba[p * 4 + 2]!) / 255;
    return [gray];
  }
  return [0, 1, 2].map((c) => {
    const plane = new Float32Array(pixels);
    for (let p = 0; p < pixels; p++) plane[p] = rgba[p * 4 + c]! / 255;
    return plane;
  });
}

/** Taps and weights (summing to 1) of a resize from `src` to `dst` samples along one axis. */
export function axisTaps(src: number, dst: number, method: 'area' | 'bilinear'): AxisTaps {
  const scale = src / dst;
  if (method === 'bilinear' || scale < 1) {
    // Half-pixel centres: target t samples source position (t + 0.5)·scale − 0.5, clamped.
    // (Enlarging by area averaging is the same as nearest-neighbour, so enlarging always interpolates.)
    const index = new Int32Array(dst * 2);
    const weight = new Float32Array(dst * 2);
    for (let t = 0; t < dst; t++) {
      const s = Math.min(src - 1, Math.max(0, (t + 0.5) * scale - 0.5));
      const s0 = Math.floor(s);
      const s1 = Math.min(src - 1, s0 + 1);
      const f = s - s0;
      index[t * 2] = s0;
      index[t * 2 + 1] = s1;
      weight[t * 2] = 1 - f;
      weight[t * 2 + 1] = f;
    }
    return { taps: 2, index, weight };
  }
  // Area: target t covers source [t·scale, (t+1)·scale); each source pixel weighs its overlap.
  const taps = Math.ceil(scale) + 1;
  const index = new Int32Array(dst * taps);
  const weight = new Float32Array(dst * taps);
  for (let t = 0; t < dst; t++) {
    const start = t * scale;
    const end = (t + 1) * scale;
    let j = 0;
    for (let s = Math.floor(start); s < end && s < src && j < taps; s++, j++) {
      const overlap = Math.min(end, s + 1) - Math.max(start, s);
      index[t * taps + j] = s;
      weight[t * taps + j] = overlap / scale;
    }
    for (; j < taps; j++) {
      index[t * taps + j] = 0;
      weight[t * taps + j] = 0;
    }
  }
  return { taps, index, weight };
}
