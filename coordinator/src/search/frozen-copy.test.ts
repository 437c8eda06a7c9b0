import { describe, expect, it } from 'vitest';
import { defaultSearchSpace } from '@netbreeder/shared-types';
import { createSearchAlgorithm } from './search-algorithm.js';
import { AgingEvolution } from './aging-evolution.js';
import { ParetoEvolution } from './pareto-evolution.js';
import { type SuccessiveHalving } from './successive-halving.js';
import { IMAGE } from './test-fixtures.js';

/**
 * The algorithms keep their members' genomes as frozen copies and share them with snapshots and
 * member lists instead of copying the population on every save: nobody can change a member's
 * genome, neither the caller that observed it nor a holder of a snapshot.
 */
describe('members keep frozen copies of their genomes', () => {
  const ctx = { space: defaultSearchSpace(), data: IMAGE, seed: 7 };
  for (const name of ['aging-evolution', 'pareto-evolution', 'asha-evolution'] as const) {
    it(`${name}: the observed genome is copied, a snapshot's genomes cannot be changed, and the snapshot does not move`, () => {
      const alg = createSearchAlgorithm(name, { populationSize: 4, sampleSize: 2, minEpochs: 1, maxEpochs: 3 }, ctx);
      const observed = [];
      for (let i = 0; i < 4; i++) {
        const p = alg.propose();
        const genome = structuredClone(p.genome);
        observed.push(genome);
        alg.observe({ evaluationId: `e${i}`, genomeHash: p.genomeHash, genome, fitness: 0.5 + i / 10, budgetEpochs: p.budgetEpochs, params: 10 + i, flops: 100 });
      }
      const before = JSON.stringify(alg.snapshot());
      // The caller changes the genomes it passed in: the members do not change with them.
      for (const g of observed) g.training.epochs = 99;
      expect(JSON.stringify(alg.snapshot())).toBe(before);

      const members =
        alg instanceof AgingEvolution || alg instanceof ParetoEvolution ? alg.members() : (alg as SuccessiveHalving).rungMembers().flat();
      expect(members.length).toBeGreaterThan(0);
      for (const m of members) {
        expect(Object.isFrozen(m.genome)).toBe(true);
        expect(Object.isFrozen(m.genome.nodes[0])).toBe(true);
        expect(() => {
          (m.genome.training as { epochs: number }).epochs = 1;
        }).toThrow(TypeError);
      }
      // A member list's own fields are copies: changing one leaves the algorithm alone.
      (members[0] as { fitness: number }).fitness = -1;
      alg.propose();
      const after = JSON.parse(JSON.stringify(alg.snapshot())) as Record<string, unknown>;
      expect(JSON.stringify(after)).not.toContain('"fitness":-1');
    });
  }
});
