import { describe, expect, it } from 'vitest';
import { defaultSearchSpace, genomeHash } from '@netbreeder/shared-types';
import { createSearchAlgorithm } from './search-algorithm.js';
import { AgingEvolution } from './aging-evolution.js';
import { ParetoEvolution } from './pareto-evolution.js';
import { type SuccessiveHalving } from './successive-halving.js';
import { IMAGE } from './test-fixtures.js';

/** Results of a quarantined worker leave the population: parents are then drawn only from the others. */
describe('forget (results of a quarantined worker no longer count for selection)', () => {
  const ctx = { space: defaultSearchSpace(), data: IMAGE, seed: 3 };
  for (const name of ['aging-evolution', 'pareto-evolution', 'asha-evolution'] as const) {
    it(`${name}: removes the named members, keeps the rest, and proposes from them`, () => {
      const alg = createSearchAlgorithm(name, { populationSize: 6, sampleSize: 6, minEpochs: 1, maxEpochs: 3 }, ctx);
      for (let i = 0; i < 6; i++) {
        const p = alg.propose();
        // Evaluations e0, e2, e4 come from the liar, with the highest fitness.
        alg.observe({ evaluationId: `e${i}`, genomeHash: p.genomeHash, genome: p.genome, fitness: i % 2 === 0 ? 0.99 : 0.3 + i / 100, budgetEpochs: p.budgetEpochs, params: 10 + i, flops: 100 });
      }
      const liar = (id: string) => ['e0', 'e2', 'e4'].includes(id);
      expect(alg.forget!(liar)).toBe(3);
      expect(alg.forget!(liar)).toBe(0);
      const members =
        alg instanceof AgingEvolution || alg instanceof ParetoEvolution ? alg.members() : (alg as SuccessiveHalving).rungMembers().flat();
      expect(members.map((m) => m.evaluationId).sort()).toEqual(['e1', 'e3', 'e5']);
      const next = alg.propose();
      expect(next.genomeHash).toBe(genomeHash(next.genome));
    });
  }
});
