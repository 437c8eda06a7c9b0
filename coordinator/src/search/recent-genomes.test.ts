import { describe, expect, it } from 'vitest';
import { createRandom, defaultSearchSpace, genomeHash } from '@netbreeder/shared-types';
import { RecentGenomes } from './recent-genomes.js';
import { genomeVariation } from './variation.js';

describe('RecentGenomes', () => {
  it('confirms a hash only for a JSON-equal genome it was given, and forgets the oldest beyond its capacity', () => {
    const recent = new RecentGenomes(2);
    recent.remember('h1', { a: 1, b: [1, 2] });
    expect(recent.madeWith('h1', JSON.parse('{"a":1,"b":[1,2]}'))).toBe(true);
    expect(recent.madeWith('h1', { a: 1, b: [1, 3] })).toBe(false);
    expect(recent.madeWith('h1', { b: [1, 2], a: 1 })).toBe(false); // another key order: hashed instead
    expect(recent.madeWith('h2', { a: 1, b: [1, 2] })).toBe(false);
    recent.remember('h2', 2);
    recent.remember('h3', 3);
    expect(recent.madeWith('h1', { a: 1, b: [1, 2] })).toBe(false);
    expect(recent.madeWith('h3', 3)).toBe(true);
  });

  it('lets the network variation confirm the hash of a child read back from JSON, and still refuse a changed one', () => {
    const data = { inputShape: [8, 8, 1], numClasses: 3 };
    const variation = genomeVariation(defaultSearchSpace(), data);
    const rng = createRandom(7);
    const child = variation.mutate(variation.minimal(rng), rng);
    const readBack = JSON.parse(JSON.stringify(child.genome));
    expect(variation.hasHash!(readBack, child.genomeHash!)).toBe(true);
    const changed = { ...readBack, training: { ...readBack.training, epochs: readBack.training.epochs + 1 } };
    expect(variation.hasHash!(changed, child.genomeHash!)).toBe(false);
    // A genome it never made is hashed.
    const other = variation.minimal(createRandom(8));
    expect(variation.hasHash!(other, genomeHash(other))).toBe(true);
  });
});
