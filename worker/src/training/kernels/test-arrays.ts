import { createRandom } from '@netbreeder/shared-types';

/** Seeded uniform values in [low, high): the inputs of the numeric tests against the cpu backend. */
export function randomArray(size: number, seed: string, low = -1, high = 1): Float32Array {
  const rng = createRandom(seed);
  return Float32Array.from({ length: size }, () => rng.uniform(low, high));
}

/** max |actual − expected| / max |expected|: the error measure of the numeric tests. */
export function relativeError(actual: ArrayLike<number>, expected: ArrayLike<number>): number {
  let maxDiff = 0;
  let maxRef = 0;
  for (let i = 0; i < expected.length; i++) {
    maxDiff = Math.max(maxDiff, Math.abs(actual[i]! - expected[i]!));
    maxRef = Math.max(maxRef, Math.abs(expected[i]!));
  }
  return maxDiff / Math.max(maxRef, 1e-12);
}
