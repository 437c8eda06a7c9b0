import { describe, expect, it } from 'vitest';
import { createRandom } from '@netbreeder/shared-types';
import { axisTaps, writeModelPixels } from './image-pixels.js';

const rgbaOf = (grey: number[]): Uint8Array => Uint8Array.from(grey.flatMap((v) => [v, v, v, 255]));

describe('writeModelPixels', () => {
  it('averages each covered block when shrinking by area (hand-computed 4×4 → 2×2)', () => {
    const grey = [0, 40, 100, 100, 80, 120, 100, 100, 255, 255, 0, 0, 255, 255, 0, 60];
    const out = new Float32Array(4);
    writeModelPixels(rgbaOf(grey), 4, 4, { width: 2, height: 2, channels: 1, method: 'area' }, out, 0);
    // Means of the four 2×2 blocks: (0+40+80+120)/4 = 60, 100, 255, 15; luma of grey = grey.
    expect([...out].map((v) => Math.round(v * 255 * 100) / 100)).toEqual([60, 100, 255, 15]);
  });

  it('area weights a partly covered pixel by its overlap (3 → 2: taps 1, ½ and ½, 1 over 1.5)', () => {
    const taps = axisTaps(3, 2, 'area');
    expect(taps.taps).toBe(3);
    expect([...taps.weight.subarray(0, 2)].map((w) => Number(w.toFixed(4)))).toEqual([0.6667, 0.3333]);
    expect([...taps.index.subarray(3, 5)]).toEqual([1, 2]);
    expect([...taps.weight.subarray(3, 5)].map((w) => Number(w.toFixed(4)))).toEqual([0.3333, 0.6667]);
  });

  it('keeps a flat image flat and a ramp a ramp under both methods, and every weight row sums to 1', () => {
    const rng = createRandom('pixels');
    for (const method of ['area', 'bilinear'] as const) {
      for (let trial = 0; trial < 20; trial++) {
        const sw = rng.int(1, 30);
        const dw = rng.int(1, 30);
        const t = axisTaps(sw, dw, method);
        for (let d = 0; d < dw; d++) {
          let sum = 0;
          for (let j = 0; j < t.taps; j++) sum += t.weight[d * t.taps + j]!;
          expect(sum).toBeCloseTo(1, 5);
        }
      }
      const out = new Float32Array(5 * 7);
      writeModelPixels(rgbaOf(Array(13 * 9).fill(128)), 13, 9, { width: 5, height: 7, channels: 1, method }, out, 0);
      for (const v of out) expect(v).toBeCloseTo(128 / 255, 5);
      // A horizontal ramp stays increasing from left to right.
      const ramp = Array.from({ length: 16 * 4 }, (_, p) => (p % 16) * 16);
      const row = new Float32Array(6 * 2);
      writeModelPixels(rgbaOf(ramp), 16, 4, { width: 6, height: 2, channels: 1, method }, row, 0);
      for (let x = 1; x < 6; x++) expect(row[x]!).toBeGreaterThan(row[x - 1]!);
    }
  });

  it('uses the BT.601 luma weights for grayscale and keeps R, G, B interleaved for colour', () => {
    const rgba = Uint8Array.from([255, 0, 0, 255, 0, 255, 0, 255, 0, 0, 255, 255, 10, 20, 30, 0]);
    const grey = new Float32Array(4);
    writeModelPixels(rgba, 2, 2, { width: 2, height: 2, channels: 1, method: 'area' }, grey, 0);
    expect([...grey].map((v) => Number(v.toFixed(4)))).toEqual([0.299, 0.587, 0.114, Number(((0.299 * 10 + 0.587 * 20 + 0.114 * 30) / 255).toFixed(4))]);
    const colour = new Float32Array(12);
    writeModelPixels(rgba, 2, 2, { width: 2, height: 2, channels: 3, method: 'area' }, colour, 0);
    expect([...colour.subarray(9)].map((v) => Math.round(v * 255))).toEqual([10, 20, 30]);
  });
});
