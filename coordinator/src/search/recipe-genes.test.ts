import { describe, expect, it } from 'vitest';
import { checkGenome, createRandom, defaultSearchSpace } from '@netbreeder/shared-types';
import { changeAugment, changeLabelSmoothing, changePatience, changeSchedule, drawRecipeGenes } from './recipe-genes.js';
import { FLAT, genome, IMAGE } from './test-fixtures.js';

describe('recipe genes', () => {
  it('draws every recipe gene the space gives a range for, seeded, leaving neutral values out', () => {
    const space = { ...defaultSearchSpace(), flips: true };
    const draws = Array.from({ length: 300 }, (_, i) => drawRecipeGenes(space, createRandom(i), IMAGE));
    expect(new Set(draws.map((d) => d.schedule?.kind ?? 'constant'))).toEqual(new Set(['constant', 'cosine', 'step']));
    expect(draws.some((d) => d.augment?.flip)).toBe(true);
    expect(draws.some((d) => d.labelSmoothing)).toBe(true);
    expect(draws.some((d) => d.patience)).toBe(true);
    for (const d of draws) {
      expect(d.schedule?.kind).not.toBe('constant');
      if (d.augment) expect(d.augment.shift > 0 || d.augment.flip).toBe(true);
      expect(checkGenome(genome([], 'input', d), space, IMAGE).ok).toBe(true);
    }
    expect(drawRecipeGenes(space, createRandom(7), IMAGE)).toEqual(drawRecipeGenes(space, createRandom(7), IMAGE));
    // flat data never gets augmentation; a space without the ranges gets none of the genes
    expect(Array.from({ length: 50 }, (_, i) => drawRecipeGenes(space, createRandom(i), FLAT)).some((d) => d.augment)).toBe(false);
    expect(drawRecipeGenes({ ...space, schedules: undefined, shift: undefined, labelSmoothing: undefined, patience: undefined }, createRandom(1), IMAGE)).toEqual({});
  });

  it.each([
    ['changeSchedule', changeSchedule],
    ['changeAugment', changeAugment],
    ['changeLabelSmoothing', changeLabelSmoothing],
    ['changePatience', changePatience],
  ] as const)('%s changes the gene and keeps the genome valid', (_name, op) => {
    const space = { ...defaultSearchSpace(), flips: true };
    const rng = createRandom(3);
    let g = genome([]);
    let changed = 0;
    for (let i = 0; i < 40; i++) {
      const out = op(g, { space, data: IMAGE, rng });
      if (!out) continue;
      expect(JSON.stringify(out.genome.training)).not.toBe(JSON.stringify(g.training));
      expect(checkGenome(out.genome, space, IMAGE).ok).toBe(true);
      expect(out.detail.length).toBeGreaterThan(0);
      g = out.genome;
      changed++;
    }
    expect(changed).toBeGreaterThan(20);
  });

  it('does not apply where the space gives no range', () => {
    const space = { ...defaultSearchSpace(), schedules: undefined, shift: undefined, labelSmoothing: undefined, patience: undefined };
    const ctx = { space, data: IMAGE, rng: createRandom(1) };
    for (const op of [changeSchedule, changeAugment, changeLabelSmoothing, changePatience]) expect(op(genome([]), ctx)).toBeNull();
    expect(changeAugment(genome([]), { ...ctx, space: defaultSearchSpace(), data: FLAT })).toBeNull();
  });
});
