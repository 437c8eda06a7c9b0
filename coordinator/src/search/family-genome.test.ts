import { describe, expect, it } from 'vitest';
import { analyzeGenome, checkGenome, createRandom, defaultSearchSpace, type SearchSpace } from '@netbreeder/shared-types';
import { familyGenome, freshGenome } from './family-genome.js';
import { FLAT, IMAGE } from './test-fixtures.js';

const draw = (space: SearchSpace, data: typeof IMAGE, seed: number) => familyGenome({ space, data, rng: createRandom(seed) });

describe('familyGenome', () => {
  it.each([
    ['image', IMAGE, 'conv2d'],
    ['flat', FLAT, 'dense'],
  ] as const)('on %s data draws valid hand-made networks of varied depth', (_name, data, weightKind) => {
    const space = defaultSearchSpace();
    const depths = new Set<number>();
    for (let seed = 0; seed < 60; seed++) {
      const g = draw(space, data, seed)!;
      expect(checkGenome(g, space, data).ok).toBe(true);
      const weights = g.nodes.filter((n) => n.kind === weightKind);
      expect(weights.length).toBeGreaterThanOrEqual(1);
      depths.add(weights.length);
      expect(g.training.optimizer).toBe('adam');
      expect(g.training.learningRate).toBeGreaterThanOrEqual(3e-4);
      expect(g.training.learningRate).toBeLessThanOrEqual(3e-3);
    }
    expect([...depths].sort()).toEqual([1, 2, 3]);
  });

  it('is seeded: the same seed draws the same genome', () => {
    const space = defaultSearchSpace();
    expect(draw(space, IMAGE, 5)).toEqual(draw(space, IMAGE, 5));
    expect(draw(space, IMAGE, 5)).not.toEqual(draw(space, IMAGE, 6));
  });

  it('narrows its widths to fit a small parameter cap', () => {
    const space = { ...defaultSearchSpace(), maxParams: 12_000 };
    for (let seed = 0; seed < 20; seed++) {
      const g = draw(space, IMAGE, seed)!;
      const a = analyzeGenome(g, IMAGE);
      expect(a.ok && a.analysis.params).toBeLessThanOrEqual(12_000);
    }
  });

  it('gives null when the space allows no layer of the family, and the start falls back to minimal', () => {
    const space = { ...defaultSearchSpace(), allowedKinds: ['dropout' as const] };
    expect(draw(space, IMAGE, 1)).toBeNull();
    const fresh = freshGenome('family', { space, data: IMAGE, rng: createRandom(1) });
    expect(fresh.origin).toBe('minimal');
    expect(fresh.genome.nodes).toEqual([]);
  });

  it('mixes both starts with even odds under "mixed"', () => {
    const rng = createRandom(3);
    const origins = Array.from({ length: 200 }, () => freshGenome('mixed', { space: defaultSearchSpace(), data: IMAGE, rng }).origin);
    const family = origins.filter((o) => o === 'family').length;
    // Binomial(200, 0.5): sd about 7.
    expect(family).toBeGreaterThan(70);
    expect(family).toBeLessThan(130);
  });
});
