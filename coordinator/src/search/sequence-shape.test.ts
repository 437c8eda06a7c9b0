import { describe, expect, it } from 'vitest';
import { analyzeGenome, checkGenome, createRandom, defaultSearchSpaceFor, fitReferenceNetwork, type DataShape } from '@netbreeder/shared-types';
import { freshGenome } from './family-genome.js';
import { minimalGenome } from './minimal-genome.js';
import { mutate } from './mutations.js';

/** A series sample as the series-windows dataset gives it: [timeSteps, channels], no batch axis. */
const SERIES: DataShape = { inputShape: [24, 3], numClasses: 3 };
const FORECAST: DataShape = { inputShape: [24, 3], numClasses: 4, target: { column: 'temp', mean: 0, std: 1 } };

describe('rank-2 (sequence) inputs, as the series-windows and sequences datasets give them', () => {
  it.each([
    ['classification', SERIES],
    ['regression', FORECAST],
  ] as const)('%s: minimal, family and reference genomes are valid, and chained mutations stay valid', (_name, data) => {
    const space = defaultSearchSpaceFor(data.inputShape);
    for (let seed = 0; seed < 10; seed++) {
      const rng = createRandom(`sequence-shape ${seed}`);
      const minimal = minimalGenome({ space, data, rng });
      const analysis = analyzeGenome(minimal, data);
      expect(analysis.ok && analysis.analysis.nodes.map((n) => n.kind)).toEqual(['head-flatten', 'head-dense']);
      const fresh = freshGenome('family', { space, data, rng });
      expect(checkGenome(fresh.genome, space, data).ok).toBe(true);
      let g = fresh.genome;
      for (let i = 0; i < 15; i++) {
        g = mutate(g, { space, data, rng }).genome;
        expect(checkGenome(g, space, data).ok).toBe(true);
      }
    }
    // The sequence reference network (a small 1-D conv net) fits the sequence space.
    const reference = fitReferenceNetwork(data, space);
    expect(reference.ok).toBe(true);
    if (reference.ok) {
      expect(checkGenome(reference.genome, space, data).ok).toBe(true);
      expect(reference.genome.nodes.some((n) => n.kind === 'conv1d')).toBe(true);
    }
  });
});
