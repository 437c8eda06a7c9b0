import { createRandom, type DataShape, type LabelledSamples } from '@netbreeder/shared-types';

/**
 * A tiny invented image task for tests and benchmarks: class k of `numClasses` is a bright bar at
 * a position that depends on k (rows for even k, columns for odd k; one position per class for
 * flat inputs; for sequences, time steps are rows and channels columns), plus uniform noise. Learnable
 * in a few epochs by a small network, hard to get perfect for a linear one at high noise.
 */
export function syntheticSamples(data: DataShape, count: number, seed: number, noise = 0.5): LabelledSamples {
  const random = createRandom(`samples ${seed}`);
  const rank = data.inputShape.length;
  const shape = rank === 3 ? data.inputShape : rank === 2 ? [...data.inputShape, 1] : [data.inputShape[0]!, 1, 1];
  const [h, w, c] = shape as [number, number, number];
  const size = h * w * c;
  const features = new Float32Array(count * size);
  const labels = new Int32Array(count);
  for (let i = 0; i < count; i++) {
    const label = random.int(0, data.numClasses - 1);
    labels[i] = label;
    const rows = w === 1 || label % 2 === 0; // flat inputs (w = 1) light one position per class
    const slots = w === 1 ? data.numClasses : Math.ceil(data.numClasses / 2);
    const slot = w === 1 ? label : Math.floor(label / 2);
    const line = Math.floor(((slot + 0.5) * (rows ? h : w)) / slots);
    for (let y = 0; y < h; y++)
      for (let x = 0; x < w; x++)
        for (let ch = 0; ch < c; ch++) {
          const on = rows ? y === line : x === line;
          features[i * size + (y * w + x) * c + ch] = (on ? 1 : 0) + noise * random.uniform(-1, 1);
        }
  }
  return { features, labels, count };
}
