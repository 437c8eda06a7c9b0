import { describe, expect, it } from 'vitest';
import { checkGenome, defaultSearchSpace, genomeHash } from '@netbreeder/shared-types';
import { RandomSearch } from './random-search.js';
import { genomeVariation } from './variation.js';
import { Driver, FLAT, IMAGE, proposalKey } from './test-fixtures.js';

const space = defaultSearchSpace();

describe('RandomSearch', () => {
  it.each([
    ['image', IMAGE],
    ['flat', FLAT],
  ] as const)('on %s data proposes valid, parentless, varied genomes', (_name, data) => {
    const alg = new RandomSearch({ settings: { randomMutations: 12 }, variation: genomeVariation(space, data), seed: 5 });
    const ps = Array.from({ length: 60 }, () => alg.propose());
    for (const p of ps) {
      expect(checkGenome(p.genome, space, data).ok).toBe(true);
      expect(p.genomeHash).toBe(genomeHash(p.genome));
      expect(p.parentHashes).toEqual([]);
      expect(p.mutation).toBeNull();
      expect(p.reason).toMatch(/^random sample \d+: minimal genome with \d+ random mutation/);
      // at most 12 mutations, each adding at most one block (up to four layers), within the space
      expect(p.genome.nodes.length).toBeLessThanOrEqual(Math.min(48, space.maxNodes));
    }
    expect(new Set(ps.map((p) => p.genomeHash)).size).toBe(60);
    const sizes = ps.map((p) => p.genome.nodes.length);
    expect(Math.min(...sizes)).toBe(0);
    expect(Math.max(...sizes)).toBeGreaterThanOrEqual(5);
  });

  it('with randomMutations 0 proposes only linear classifiers', () => {
    const alg = new RandomSearch({ settings: { randomMutations: 0 }, variation: genomeVariation(space, IMAGE), seed: 1 });
    for (let i = 0; i < 10; i++) expect(alg.propose().genome.nodes).toEqual([]);
  });

  it('ignores results: observing changes no later proposal', () => {
    const make = () => new RandomSearch({ settings: { randomMutations: 6 }, variation: genomeVariation(space, IMAGE), seed: 9 });
    const quiet = make();
    const quietProposals = Array.from({ length: 25 }, () => proposalKey(quiet.propose()));
    const listened = new Driver('d').run(make(), 60);
    const firstN = listened.proposals.slice(0, 25).map(proposalKey);
    expect(listened.observations.length).toBeGreaterThan(0);
    expect(firstN).toEqual(quietProposals.slice(0, firstN.length));
  });
});
