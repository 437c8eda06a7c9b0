import { describe, expect, it } from 'vitest';
import { analyzeGenome, checkGenome, createRandom, defaultSearchSpace, fitReferenceNetwork, type DataShape } from '@netbreeder/shared-types';
import { freshGenome } from './family-genome.js';
import { minimalGenome } from './minimal-genome.js';
import { mutate } from './mutations.js';

/** A series sample as the series-windows dataset gives it: [timeSteps, channels], no batch axis. */
const SERIES: DataShape = { inputShape: [24, 3], numClasses: 3 };
const FORECAST: DataShape = { inputShape: [24, 3], numClasses: 4, target: { column: 'temp', mean: 0, std: 1 } };

describe('rank-2 (sequence) inputs before the sequence layers exist: flatten → dense networks', () => {
  it.each([
    ['classification', SERIES],
    ['regression', FORECAST],
  ] as const)('%s: minimal, family and reference genomes are valid, and chained mutations stay valid', (_name, data) => {
    const space = defaultSearchSpace();
    for (let seed = 0; seed < 10; seed++) {
      const rng = createRandom(`sequence-shape ${seed}`);
      const minimal = minimalGenome({ space, data, rng });
      const analysis = analyzeGenome(minimal, data);
      expect(analysis.ok && analysis.analysis.nodes.map((n) => n.kind)).toEqual(['head-flatten', 'head-dense']);
      // The dense family has no flatten first, so on rank-2 inputs `family` falls back to the minimal genome for now.
      const fresh = freshGenome('family', { space, data, rng });
      expect(checkGenome(fresh.genome, space, data).ok).toBe(true);
      let g = fresh.genome;
      for (let i = 0; i < 15; i++) {
        g = mutate(g, { space, data, rng }).genome;
        expect(checkGenome(g, space, data).ok).toBe(true);
      }
    }
    // The hand-made dense reference has no flatten before its first dense layer, so on a series
    // it is skipped with this reason (a `reference-skipped` event) and the run goes on without it,
    // until shared-types/src/genome/reference-networks.ts gives rank-2 inputs a reference of their own.
    const reference = fitReferenceNetwork(data, space);
    if (reference.ok) expect(checkGenome(reference.genome, space, data).ok).toBe(true);
    else expect(reference.reason).toMatch(/dense needs a flat input but gets \[24, 3\]/);
  });
});
