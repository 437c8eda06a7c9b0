import { describe, expect, it } from 'vitest';
import { checkGenome, defaultSearchSpace, restoreRandom } from '@netbreeder/shared-types';
import { crowdedCompare, rankAndCrowding } from './nsga2.js';
import { ParetoEvolution } from './pareto-evolution.js';
import type { Observation, Proposal } from './search-algorithm.js';
import type { SizeObjective } from './search-settings.js';
import { genomeVariation, type Variation } from './variation.js';
import { IMAGE } from './test-fixtures.js';

const space = defaultSearchSpace();
const variation = genomeVariation(space, IMAGE);
const pareto = (populationSize: number, sampleSize: number, objective: SizeObjective = 'params', seed = 1) =>
  new ParetoEvolution({ settings: { populationSize, sampleSize, initialMutations: 2, objective }, variation, seed });

let nextId = 0;
const result = (p: Proposal, fitness: number, params: number, flops = params * 2): Observation => ({
  evaluationId: `p${nextId++}`,
  genomeHash: p.genomeHash,
  genome: p.genome,
  fitness,
  params,
  flops,
});

describe('ParetoEvolution', () => {
  it('proposes P valid initial members first, then children of members', () => {
    const alg = pareto(4, 2);
    const first = Array.from({ length: 4 }, () => alg.propose());
    first.forEach((p, i) => {
      expect(p.reason).toMatch(new RegExp(`^initial member ${i + 1} of 4`));
      expect(checkGenome(p.genome, space, IMAGE).ok).toBe(true);
    });
    expect(alg.propose().reason).toMatch(/^extra initial member/);
    alg.observe(result(first[0]!, 0.5, 100));
    const child = alg.propose();
    expect(child.parentHashes).toEqual([first[0]!.genomeHash]);
    expect(child.reason).toMatch(/^crowded tournament of 2 draws .* params 100, front 0, crowding Infinity\), is the parent; /);
  });

  it('the parent is the best drawn by the crowded comparison (replayed from the rng state)', () => {
    const alg = pareto(10, 3, 'flops', 4);
    const ps = Array.from({ length: 10 }, () => alg.propose());
    ps.forEach((p, i) => alg.observe(result(p, (i * 37) % 10 / 10, 50 + ((i * 13) % 7) * 10)));
    for (let i = 0; i < 25; i++) {
      const before = alg.snapshot();
      const rc = rankAndCrowding(before.population.map((m) => [-m.fitness, m.cost]));
      const rng = restoreRandom(before.rng);
      let winner = -1;
      for (let k = 0; k < 3; k++) {
        const d = rng.int(0, before.population.length - 1);
        if (winner < 0 || crowdedCompare(d, winner, rc) < 0) winner = d;
      }
      const child = alg.propose();
      expect(child.parentHashes).toEqual([before.population[winner]!.genomeHash]);
      alg.observe(result(child, (i % 5) / 5, 40 + i));
    }
  });

  it('beyond P members, the worst by the crowded comparison leaves, not the oldest', () => {
    const alg = pareto(3, 2);
    const ps = Array.from({ length: 4 }, () => alg.propose());
    alg.observe(result(ps[0]!, 0.9, 1000)); // oldest, on the front (most accurate)
    alg.observe(result(ps[1]!, 0.5, 10)); // on the front (smallest)
    alg.observe(result(ps[2]!, 0.4, 500)); // dominated by ps[1]
    alg.observe(result(ps[3]!, 0.7, 100)); // on the front
    expect(alg.members().map((m) => m.genomeHash)).toEqual([ps[0]!, ps[1]!, ps[3]!].map((p) => p.genomeHash));
    expect(alg.members().map((m) => m.cost)).toEqual([1000, 10, 100]);
  });

  it('uses the FLOPs when asked', () => {
    const alg = pareto(3, 2, 'flops');
    const p = alg.propose();
    alg.observe(result(p, 0.5, 10, 777));
    expect(alg.members()[0]!.cost).toBe(777);
  });

  it('uses the measured latency when asked', () => {
    const alg = pareto(3, 2, 'latency');
    const p = alg.propose();
    alg.observe({ ...result(p, 0.5, 10, 777), latency: 1.25 });
    expect(alg.members()[0]!.cost).toBe(1.25);
    expect(() => alg.observe(result(alg.propose(), 0.5, 10, 777))).toThrow(/minimises latency/);
  });

  it('needs the objective on every result, and counts a repeated result once', () => {
    const alg = pareto(3, 2);
    const p = alg.propose();
    expect(() => alg.observe({ ...result(p, 0.5, 10), params: undefined })).toThrow(/pareto-evolution minimises params and needs it as a finite number ≥ 0, got undefined/);
    expect(() => alg.observe({ ...result(p, 0.5, -1) })).toThrow(/finite number ≥ 0/);
    const o = result(p, 0.5, 10);
    alg.observe(o);
    alg.observe(o);
    expect(alg.members()).toHaveLength(1);
  });

  it('moves the population towards the accuracy-size front (bit strings: accuracy from the left half, size from the right)', () => {
    // A synthetic two-objective problem for the selection logic only: fitness = ones in bits 0..9 / 10,
    // size = ones in bits 10..19 + 1. The front is every string with the right half empty.
    const bits: Variation<number[]> = {
      minimal: (rng) => Array.from({ length: 20 }, () => (rng.chance(0.5) ? 1 : 0)),
      mutate: (g, rng) => {
        const i = rng.int(0, 19);
        return { genome: g.map((b, j) => (j === i ? 1 - b : b)), mutation: { operator: 'flip-bit', detail: `bit ${i}` } };
      },
      hash: (g) => g.join(''),
      isGenome: (v): v is number[] => Array.isArray(v),
    };
    const alg = new ParetoEvolution<number[]>({ settings: { populationSize: 20, sampleSize: 4, initialMutations: 0, objective: 'params' }, variation: bits, seed: 8 });
    const score = (g: number[]) => ({ fitness: g.slice(0, 10).reduce((a, b) => a + b, 0) / 10, params: g.slice(10).reduce((a, b) => a + b, 0) + 1 });
    const meanSize = () => alg.members().reduce((a, m) => a + m.cost, 0) / alg.members().length;
    let startSize = 0;
    for (let i = 0; i < 600; i++) {
      const p = alg.propose();
      alg.observe({ evaluationId: `b${i}`, genomeHash: p.genomeHash, genome: p.genome, ...score(p.genome) });
      if (i === 19) startSize = meanSize();
    }
    expect(startSize).toBeGreaterThan(4); // random halves hold about 5 ones
    expect(meanSize()).toBeLessThan(2.5);
    const best = Math.max(...alg.members().map((m) => m.fitness));
    expect(best).toBe(1); // the most accurate end of the front is kept
    expect(alg.members().some((m) => m.cost === 1)).toBe(true); // and the smallest end
  });
});
