/**
 * A small seeded random source (sfc32) whose whole state is four 32-bit integers, so it can be
 * stored beside a run and restored after a restart. Pure: no global state, no Math.random.
 */
import { InternalError } from './errors/netbreeder-error.js';
export type RandomState = readonly [number, number, number, number];

export interface Random {
  /** Uniform in [0, 1). */
  next(): number;
  /** Uniform integer in [min, max] (both inclusive). */
  int(min: number, max: number): number;
  /** Uniform in [min, max). */
  uniform(min: number, max: number): number;
  /** Log-uniform in [min, max): uniform in log space, for learning rates. */
  logUniform(min: number, max: number): number;
  /** Standard normal (Box-Muller). */
  normal(): number;
  /** True with probability p. */
  chance(p: number): boolean;
  /** One element of a non-empty array. */
  pick<T>(items: readonly T[]): T;
  /** A new array with the items in a random order (Fisher-Yates). */
  shuffled<T>(items: readonly T[]): T[];
  /** A 32-bit unsigned integer, for seeding something else. */
  uint32(): number;
  /** The next `count` values of {@link next}, written into `out` in one loop (bulk draws such as dropout masks). */
  fillUniform(out: Float64Array, count: number): void;
  /** The current state, to store and restore with {@link restoreRandom}. */
  state(): RandomState;
}

/** Hashes a string or number seed into a 32-bit integer (xmur3-style mixing). */
function seedHash(seed: string | number): number {
  const text = String(seed);
  let h = 1779033703 ^ text.length;
  for (let i = 0; i < text.length; i++) {
    h = Math.imul(h ^ text.charCodeAt(i), 3432918353);
    h = (h << 13) | (h >>> 19);
  }
  h = Math.imul(h ^ (h >>> 16), 2246822507);
  h = Math.imul(h ^ (h >>> 13), 3266489909);
  return (h ^= h >>> 16) >>> 0;
}

/** A random source seeded from `seed`; the same seed always gives the same sequence. */
export function createRandom(seed: string | number): Random {
  const s = seedHash(seed);
  const rng = restoreRandom([s, s ^ 0x9e3779b9, s ^ 0x85ebca6b, 1]);
  for (let i = 0; i < 15; i++) rng.next(); // warm up as the sfc32 authors advise
  return rng;
}

/** A random source that continues exactly where the one that produced `state` stopped. */
export function restoreRandom(state: RandomState): Random {
  let [a, b, c, d] = state.map((v) => v | 0) as [number, number, number, number];
  /**
   * sfc32's step, `count` times on local copies of the state (so a bulk draw makes no call per
   * value); writes each draw as a uniform in [0, 1) into `out` when given; returns the last draw.
   */
  const advance = (count: number, out: Float64Array | null): number => {
    let [p, q, r, s] = [a, b, c, d];
    let t = 0;
    for (let i = 0; i < count; i++) {
      t = (((p + q) | 0) + s) | 0;
      s = (s + 1) | 0;
      p = q ^ (q >>> 9);
      q = (r + (r << 3)) | 0;
      r = (r << 21) | (r >>> 11);
      r = (r + t) | 0;
      if (out) out[i] = (t >>> 0) / 4294967296;
    }
    [a, b, c, d] = [p, q, r, s];
    return t >>> 0;
  };
  const uint32 = (): number => advance(1, null);
  const next = (): number => uint32() / 4294967296;
  const rng: Random = {
    next,
    uint32,
    int: (min, max) => min + Math.floor(next() * (max - min + 1)),
    uniform: (min, max) => min + next() * (max - min),
    logUniform: (min, max) => Math.exp(Math.log(min) + next() * (Math.log(max) - Math.log(min))),
    normal: () => {
      const u = 1 - next();
      const v = next();
      return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * v);
    },
    chance: (p) => next() < p,
    pick: (items) => {
      if (items.length === 0) throw new InternalError('pick() needs a non-empty array');
      return items[Math.floor(next() * items.length)] as (typeof items)[number];
    },
    shuffled: (items) => {
      const out = items.slice();
      for (let i = out.length - 1; i > 0; i--) {
        const j = Math.floor(next() * (i + 1));
        [out[i], out[j]] = [out[j]!, out[i]!];
      }
      return out;
    },
    fillUniform: (out, count) => void advance(count, out),
    state: () => [a >>> 0, b >>> 0, c >>> 0, d >>> 0],
  };
  return rng;
}
