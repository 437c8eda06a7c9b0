import type { Augmentation, Random } from '@netbreeder/shared-types';

/**
 * Augments one training batch of images in place: each sample is shifted by dx, dy drawn uniformly
 * from [−shift, shift] (pixels moved out of the frame are dropped, pixels moved in are 0), then,
 * when `flip` is on, mirrored left to right with probability ½. Draws come from `random`, in
 * sample order (dx, dy, then the flip), so a training is replayable from its seed and a checkpoint
 * that stores the random state resumes the same draws. Pure JavaScript on the batch's array, so
 * every backend trains on the same pixels. `scratch` holds one sample.
 */
export function augmentBatch(features: Float32Array, size: number, shape: readonly number[], aug: Augmentation, random: Random, scratch: Float32Array): void {
  const [height, width, channels] = shape as [number, number, number];
  const len = height * width * channels;
  const k = aug.shift;
  if (k === 0 && !aug.flip) return;
  for (let b = 0; b < size; b++) {
    const dx = k > 0 ? random.int(-k, k) : 0;
    const dy = k > 0 ? random.int(-k, k) : 0;
    const mirror = aug.flip && random.chance(0.5);
    if (dx === 0 && dy === 0 && !mirror) continue;
    const sample = features.subarray(b * len, (b + 1) * len);
    scratch.set(sample);
    for (let y = 0; y < height; y++) {
      const sy = y - dy;
      for (let x = 0; x < width; x++) {
        const shiftedX = x - dx;
        const sx = mirror ? width - 1 - shiftedX : shiftedX;
        const to = (y * width + x) * channels;
        if (sy < 0 || sy >= height || sx < 0 || sx >= width) {
          for (let c = 0; c < channels; c++) sample[to + c] = 0;
        } else {
          const from = (sy * width + sx) * channels;
          for (let c = 0; c < channels; c++) sample[to + c] = scratch[from + c]!;
        }
      }
    }
  }
}

/** Label smoothing in place: each one-hot row becomes (1 − ε)·row + ε/classes. */
export function smoothLabels(oneHot: Float32Array, size: number, numClasses: number, epsilon: number): void {
  if (!(epsilon > 0)) return;
  const off = epsilon / numClasses;
  for (let i = 0; i < size * numClasses; i++) oneHot[i] = oneHot[i]! * (1 - epsilon) + off;
}
