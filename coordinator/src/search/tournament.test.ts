import { describe, expect, it } from 'vitest';
import { createRandom } from '@netbreeder/shared-types';
import { tournamentSelect } from './tournament.js';

describe('tournamentSelect', () => {
  const fitness = Array.from({ length: 20 }, (_, i) => ((i * 7) % 20) / 20); // 20 distinct values, shuffled

  it('picks the fittest of the drawn members, every time', () => {
    const rng = createRandom(1);
    for (let i = 0; i < 500; i++) {
      const { winner, drawn } = tournamentSelect(fitness, 5, rng);
      expect(drawn).toHaveLength(5);
      for (const k of drawn) expect(k >= 0 && k < fitness.length).toBe(true);
      expect(fitness[winner]).toBe(Math.max(...drawn.map((k) => fitness[k]!)));
      expect(drawn).toContain(winner);
    }
  });

  it('draws with replacement', () => {
    const { drawn } = tournamentSelect([0.1, 0.2, 0.3], 30, createRandom(2));
    expect(drawn).toHaveLength(30);
    expect(new Set(drawn).size).toBeLessThanOrEqual(3);
  });

  it('gives a tie to the member drawn first', () => {
    const rng = createRandom(3);
    for (let i = 0; i < 50; i++) {
      const { winner, drawn } = tournamentSelect([0.5, 0.5, 0.5, 0.5], 3, rng);
      expect(winner).toBe(drawn[0]);
    }
  });

  it('draws uniformly: the global best wins with probability 1 − (1 − 1/n)^S', () => {
    // n = 20, S = 5: 1 − 0.95^5 ≈ 0.2262 (exact for uniform draws with replacement).
    const rng = createRandom(4);
    const best = fitness.indexOf(Math.max(...fitness));
    const N = 6000;
    let wins = 0;
    for (let i = 0; i < N; i++) if (tournamentSelect(fitness, 5, rng).winner === best) wins++;
    const p = 1 - 0.95 ** 5;
    // standard error sqrt(p(1−p)/N) ≈ 0.0054; allow about 4 of them
    expect(Math.abs(wins / N - p)).toBeLessThan(0.022);
  });

  it('with standings, a higher standing wins whatever the fitness; fitness decides among equals', () => {
    const rng = createRandom(5);
    const fit = [0.9, 0.5, 0.7, 0.6];
    const standing = [0, 1, 1, 0];
    for (let i = 0; i < 200; i++) {
      const { winner, drawn } = tournamentSelect(fit, 3, rng, standing);
      const top = Math.max(...drawn.map((k) => standing[k]!));
      const best = Math.max(...drawn.filter((k) => standing[k] === top).map((k) => fit[k]!));
      expect(standing[winner]).toBe(top);
      expect(fit[winner]).toBe(best);
    }
    expect(() => tournamentSelect(fit, 3, rng, [0, 1])).toThrow(/2 standings for 4 members/);
  });

  it('refuses an empty population or a bad sample size', () => {
    expect(() => tournamentSelect([], 3, createRandom(1))).toThrow(/at least one member/);
    expect(() => tournamentSelect([1], 0, createRandom(1))).toThrow(/sample size/);
    expect(() => tournamentSelect([1], 1.5, createRandom(1))).toThrow(/sample size/);
  });
});
