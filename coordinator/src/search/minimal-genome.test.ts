import { describe, expect, it } from 'vitest';
import { analyzeGenome, checkGenome, createRandom, defaultSearchSpace } from '@netbreeder/shared-types';
import { minimalGenome, MinimalGenomeError, randomTrainingGenes } from './minimal-genome.js';
import { ctxFor, FLAT, IMAGE } from './test-fixtures.js';

describe('minimalGenome', () => {
  it.each([
    ['image', IMAGE],
    ['flat', FLAT],
  ] as const)('on %s data is a linear classifier that passes the space', (_name, data) => {
    const g = minimalGenome(ctxFor(data, 3));
    expect(g.nodes).toEqual([]);
    expect(g.output).toBe('input');
    expect(checkGenome(g, defaultSearchSpace(), data).ok).toBe(true);
    const a = analyzeGenome(g, data);
    // only the implicit head: (features · classes) weights + classes biases
    const features = data.inputShape.reduce((x, y) => x * y, 1);
    expect(a.ok && a.analysis.params).toBe(features * data.numClasses + data.numClasses);
  });

  it('draws its training genes from the space, seeded', () => {
    const space = defaultSearchSpace();
    const genes = Array.from({ length: 400 }, (_, i) => randomTrainingGenes(space, createRandom(i)));
    for (const t of genes) {
      expect(t.learningRate).toBeGreaterThanOrEqual(space.learningRate.min);
      expect(t.learningRate).toBeLessThanOrEqual(space.learningRate.max);
      expect(space.batchSizes).toContain(t.batchSize);
      expect(space.optimizers).toContain(t.optimizer);
      expect(t.weightDecay).toBeGreaterThanOrEqual(space.weightDecay.min);
      expect(t.weightDecay).toBeLessThanOrEqual(space.weightDecay.max);
      expect(t.epochs).toBeGreaterThanOrEqual(space.epochs.min);
      expect(t.epochs).toBeLessThanOrEqual(space.epochs.max);
    }
    // Weight decay is exactly 0 about half the time (the documented rule); 400 draws, sd about 10.
    const zeros = genes.filter((t) => t.weightDecay === 0).length;
    expect(zeros).toBeGreaterThan(150);
    expect(zeros).toBeLessThan(250);
    // The learning rate is log-uniform on [1e-4, 3e-2]: the geometric midpoint, about 1.7e-3,
    // splits the draws about in half (a linear draw would put about 95% above it).
    const below = genes.filter((t) => t.learningRate < Math.sqrt(1e-4 * 3e-2)).length;
    expect(below).toBeGreaterThan(150);
    expect(below).toBeLessThan(250);
    expect(new Set(genes.map((t) => t.optimizer)).size).toBe(space.optimizers.length);
    expect(new Set(genes.map((t) => t.batchSize)).size).toBe(space.batchSizes.length);
  });

  it('the same seed gives the same genome', () => {
    expect(minimalGenome(ctxFor(IMAGE, 'x'))).toEqual(minimalGenome(ctxFor(IMAGE, 'x')));
    expect(minimalGenome(ctxFor(IMAGE, 'x'))).not.toEqual(minimalGenome(ctxFor(IMAGE, 'y')));
  });

  it('throws a clear error when even the linear classifier breaks the caps', () => {
    const space = { ...defaultSearchSpace(), maxParams: 100 };
    expect(() => minimalGenome(ctxFor(IMAGE, 1, space))).toThrow(MinimalGenomeError);
    expect(() => minimalGenome(ctxFor(IMAGE, 1, space))).toThrow(/linear classifier .* raise maxParams/);
  });
});
