import { describe, expect, it } from 'vitest';
import { createRandom, restoreRandom, type Random } from './random.js';

const draws = (rng: Random, n: number) => Array.from({ length: n }, () => rng.uint32());

describe('createRandom', () => {
  it('the same seed gives the same sequence; other seeds give others', () => {
    expect(draws(createRandom(42), 50)).toEqual(draws(createRandom(42), 50));
    expect(draws(createRandom('run-a'), 50)).toEqual(draws(createRandom('run-a'), 50));
    const firsts = [0, 1, 2, 3, 42, 'run-a', 'run-b'].map((s) => draws(createRandom(s), 4).join(','));
    expect(new Set(firsts).size).toBe(firsts.length);
  });

  it('is stable across runs: pinned first draws', () => {
    // Computed once with this implementation and pinned. Runs are replayed from a stored seed, so
    // the sequence for a seed must never change silently; if this fails, stored runs no longer
    // replay the same way.
    expect(draws(createRandom(1), 4)).toEqual([3691048607, 1437658096, 3290063528, 16410255]);
  });
});

describe('restoreRandom', () => {
  it('continues exactly where the state was taken', () => {
    const a = createRandom(7);
    draws(a, 13);
    a.normal();
    a.shuffled([1, 2, 3, 4, 5]);
    const state = a.state();
    const b = restoreRandom(JSON.parse(JSON.stringify(state)) as typeof state);
    expect(draws(b, 100)).toEqual(draws(a, 100));
  });

  it('state() is four 32-bit unsigned integers and does not advance the source', () => {
    const a = createRandom(9);
    const s1 = a.state();
    const s2 = a.state();
    expect(s1).toEqual(s2);
    expect(s1).toHaveLength(4);
    for (const v of s1) expect(Number.isInteger(v) && v >= 0 && v <= 0xffffffff).toBe(true);
  });
});

describe('the draws', () => {
  const rng = createRandom(2024);
  const N = 20_000;

  it('next() is in [0, 1) with mean near 1/2', () => {
    let sum = 0;
    let outside = 0;
    for (let i = 0; i < N; i++) {
      const v = rng.next();
      if (!(v >= 0 && v < 1)) outside++;
      sum += v;
    }
    expect(outside).toBe(0);
    // standard error of the mean of U(0,1) over 20k draws is about 0.002; allow 5 of them
    expect(Math.abs(sum / N - 0.5)).toBeLessThan(0.01);
  });

  it('int(min, max) covers both bounds and nothing outside them', () => {
    const seen = new Map<number, number>();
    for (let i = 0; i < 6000; i++) {
      const v = rng.int(-2, 3);
      seen.set(v, (seen.get(v) ?? 0) + 1);
    }
    expect([...seen.keys()].sort((x, y) => x - y)).toEqual([-2, -1, 0, 1, 2, 3]);
    // 1000 expected per value, standard deviation about 29
    for (const count of seen.values()) expect(Math.abs(count - 1000)).toBeLessThan(150);
  });

  it('uniform and logUniform stay in range; logUniform is uniform in log space', () => {
    let belowGeoMean = 0;
    let outside = 0;
    for (let i = 0; i < N; i++) {
      const u = rng.uniform(-3, 5);
      const l = rng.logUniform(1e-4, 1e-2);
      if (!(u >= -3 && u < 5) || !(l >= 1e-4 && l < 1e-2)) outside++;
      if (l < 1e-3) belowGeoMean++;
    }
    expect(outside).toBe(0);
    // 1e-3 is the geometric midpoint of [1e-4, 1e-2], so about half the draws fall below it
    expect(Math.abs(belowGeoMean / N - 0.5)).toBeLessThan(0.02);
  });

  it('normal() has mean near 0 and variance near 1', () => {
    let sum = 0;
    let sq = 0;
    for (let i = 0; i < N; i++) {
      const v = rng.normal();
      sum += v;
      sq += v * v;
    }
    expect(Math.abs(sum / N)).toBeLessThan(0.04);
    expect(Math.abs(sq / N - 1)).toBeLessThan(0.05);
  });

  it('chance(p) is never true at 0 and always at 1', () => {
    const results = new Set<string>();
    for (let i = 0; i < 1000; i++) results.add(`${rng.chance(0)}/${rng.chance(1)}`);
    expect([...results]).toEqual(['false/true']);
  });

  it('pick takes an element and refuses an empty array', () => {
    const items = ['a', 'b', 'c'];
    const seen = new Set<string>();
    for (let i = 0; i < 200; i++) seen.add(rng.pick(items));
    expect([...seen].sort()).toEqual(items);
    expect(() => rng.pick([])).toThrow(/non-empty/);
  });

  it('shuffled returns a permutation and leaves its argument alone', () => {
    const items = [1, 2, 3, 4, 5, 6, 7, 8];
    const out = rng.shuffled(items);
    expect(items).toEqual([1, 2, 3, 4, 5, 6, 7, 8]);
    expect([...out].sort((a, b) => a - b)).toEqual(items);
    const orders = new Set(Array.from({ length: 50 }, () => rng.shuffled(items).join(',')));
    expect(orders.size).toBeGreaterThan(40);
  });

  it('fillUniform writes the values next() would give and leaves the state where they would', () => {
    const one = createRandom('bulk');
    const many = createRandom('bulk');
    one.next();
    many.next();
    const out = new Float64Array(1000);
    many.fillUniform(out, 999);
    expect(Array.from(out.subarray(0, 999))).toEqual(Array.from({ length: 999 }, () => one.next()));
    expect(out[999]).toBe(0);
    expect(many.state()).toEqual(one.state());
    expect(many.next()).toBe(one.next());
  });
});
