import { describe, expect, it } from 'vitest';
import { createRandom, type Random } from '@netbreeder/shared-types';
import { AgingEvolution } from './aging-evolution.js';
import { RandomSearch } from './random-search.js';
import type { SearchAlgorithm } from './search-algorithm.js';
import type { Variation } from './variation.js';

/**
 * The toy problem of the appendix of Real, Aggarwal, Huang, Le (AAAI 2019), as recorded in
 * /work/shared/REFERENCES.md and issue 7: 100-bit genomes, fitness = ones/100 + N(0, 0.01) noise
 * (read here as a standard deviation of 0.01), one-bit mutation, P = 100, S = 10, 1,000 cycles.
 * The comparison measure (the mean over seeds of the best TRUE fitness, ones/100, among the genomes
 * evaluated) is our choice.
 */
const BITS = 100;
const oneBit: Variation<number[]> = {
  minimal: (rng) => Array.from({ length: BITS }, () => (rng.chance(0.5) ? 1 : 0)),
  mutate: (parent, rng) => {
    const i = rng.int(0, BITS - 1);
    return { genome: parent.map((b, j) => (j === i ? 1 - b : b)), mutation: { operator: 'flip-bit', detail: `bit ${i}` } };
  },
  hash: (g) => g.join(''),
  isGenome: (v): v is number[] => Array.isArray(v) && v.length === BITS && v.every((b) => b === 0 || b === 1),
};
const ones = (g: readonly number[]) => g.reduce((a, b) => a + b, 0);

/** Runs `cycles` sequential propose/observe cycles with noisy fitness; returns the best true fitness seen. */
function bestTrueFitness(alg: SearchAlgorithm<number[]>, noise: Random, cycles: number): number {
  let best = 0;
  for (let i = 0; i < cycles; i++) {
    const p = alg.propose();
    const truth = ones(p.genome) / BITS;
    best = Math.max(best, truth);
    alg.observe({ evaluationId: `c${i}`, genomeHash: p.genomeHash, genome: p.genome, fitness: truth + 0.01 * noise.normal() });
  }
  return best;
}

describe('aging evolution against random search on the 100-bit toy problem', () => {
  it('wins on every one of 5 seeds and on average over 1,000 cycles', () => {
    const SEEDS = [1, 2, 3, 4, 5];
    const evo: number[] = [];
    const rnd: number[] = [];
    for (const seed of SEEDS) {
      const e = new AgingEvolution({ settings: { populationSize: 100, sampleSize: 10, initialMutations: 0 }, variation: oneBit, seed });
      evo.push(bestTrueFitness(e, createRandom(`noise-e-${seed}`), 1000));
      const r = new RandomSearch({ settings: { randomMutations: 0 }, variation: oneBit, seed });
      rnd.push(bestTrueFitness(r, createRandom(`noise-r-${seed}`), 1000));
    }
    const mean = (xs: number[]) => xs.reduce((a, b) => a + b, 0) / xs.length;
    // Random 100-bit strings have 50 ± 5 ones; the best of 1,000 is near 65 (about 3 standard
    // deviations; a rough bound from the binomial tail, from memory of its usual size).
    expect(Math.max(...rnd)).toBeLessThan(0.72);
    for (let i = 0; i < SEEDS.length; i++) expect(evo[i]!).toBeGreaterThan(rnd[i]!);
    // Measured with these seeds: evolution 0.89, 0.91, 0.87, 0.94, 0.92; random 0.67, 0.69, 0.66, 0.66, 0.65.
    expect(mean(evo) - mean(rnd)).toBeGreaterThan(0.05);
  });
});
