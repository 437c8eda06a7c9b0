import * as tf from '@tensorflow/tfjs';
import { beforeAll, describe, expect, it } from 'vitest';
import { createRandom, type Random } from '@netbreeder/shared-types';
import { augmentBatch, smoothLabels } from './augment.js';

/** A random source that hands out the given integers and coin flips, in order. */
function scripted(ints: number[], coins: boolean[] = []): Random {
  const base = createRandom(1);
  return { ...base, int: () => ints.shift()!, chance: () => coins.shift()! };
}

beforeAll(async () => {
  await tf.setBackend('cpu');
});

describe('augmentBatch', () => {
  it('moves a known pixel by (dx, dy) and fills the edge it leaves with zeros', () => {
    // A 4×5 image with one channel: pixel (x=1, y=2) is 1, the rest 0.5.
    const img = new Float32Array(20).fill(0.5);
    img[2 * 5 + 1] = 1;
    augmentBatch(img, 1, [4, 5, 1], { shift: 2, flip: false }, scripted([2, -1]), new Float32Array(20));
    // dx = +2, dy = −1: the bright pixel lands at (3, 1); columns 0-1 and the last row are empty.
    expect(img[1 * 5 + 3]).toBe(1);
    for (let y = 0; y < 4; y++) for (let x = 0; x < 2; x++) expect(img[y * 5 + x]).toBe(0);
    for (let x = 0; x < 5; x++) expect(img[3 * 5 + x]).toBe(0);
    expect(img[0 * 5 + 2]).toBe(0.5);
  });

  it('shifts each sample exactly as padding and slicing do in the TensorFlow.js cpu backend (the reference)', () => {
    const [h, w, c] = [6, 7, 2];
    const size = 5;
    const random = createRandom('images');
    const batch = new Float32Array(size * h * w * c).map(() => random.next());
    const shifts = [[0, 0], [1, -2], [-3, 3], [2, 1], [-1, -1]] as const;
    const ours = batch.slice();
    augmentBatch(ours, size, [h, w, c], { shift: 3, flip: false }, scripted(shifts.flatMap(([dx, dy]) => [dx, dy])), new Float32Array(h * w * c));
    const k = 3;
    shifts.forEach(([dx, dy], b) => {
      const expected = tf.tidy(() => {
        const x = tf.tensor3d(batch.subarray(b * h * w * c, (b + 1) * h * w * c), [h, w, c]);
        // out(y, x) = in(y − dy, x − dx): pad k on every side, then read the window starting at (k − dy, k − dx).
        return tf.slice(tf.pad(x, [[k, k], [k, k], [0, 0]]), [k - dy, k - dx, 0], [h, w, c]).dataSync();
      });
      expect(Array.from(ours.subarray(b * h * w * c, (b + 1) * h * w * c))).toEqual(Array.from(expected));
    });
  });

  it('mirrors left to right as the cpu backend reverses the width axis, and only when the coin says so', () => {
    const [h, w, c] = [3, 4, 3];
    const random = createRandom('mirror');
    const batch = new Float32Array(2 * h * w * c).map(() => random.next());
    const ours = batch.slice();
    augmentBatch(ours, 2, [h, w, c], { shift: 0, flip: true }, scripted([], [true, false]), new Float32Array(h * w * c));
    const reversed = tf.tidy(() => tf.reverse(tf.tensor3d(batch.subarray(0, h * w * c), [h, w, c]), 1).dataSync());
    expect(Array.from(ours.subarray(0, h * w * c))).toEqual(Array.from(reversed));
    expect(Array.from(ours.subarray(h * w * c))).toEqual(Array.from(batch.subarray(h * w * c)));
  });
});

describe('smoothLabels', () => {
  it('turns one-hot rows into (1 − ε)·one-hot + ε/classes, each row still summing to 1', () => {
    const oneHot = new Float32Array([0, 1, 0, 0, 1, 0, 0, 0]);
    smoothLabels(oneHot, 2, 4, 0.2);
    expect(Array.from(oneHot).map((v) => Number(v.toFixed(6)))).toEqual([0.05, 0.85, 0.05, 0.05, 0.85, 0.05, 0.05, 0.05]);
  });
});
