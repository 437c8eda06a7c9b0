import type { LabelledSamples } from '@netbreeder/shared-types';
import { describe, expect, it } from 'vitest';
import { DatasetError, type DatasetErrorCode } from './dataset-error.js';
import { generateDemoTiles } from './demo-tiles.js';
import { prepareDataset } from './prepare-dataset.js';
import { classCounts, classSplitSizes, stratifiedSplit, stratifiedSplitIndices } from './split.js';

const SIZE = 3;
const SHAPE = [SIZE];

/** Samples whose features spell out their own index (i, −i, label), so each one can be traced. */
function tracedSamples(classSizes: number[]): LabelledSamples {
  const labels: number[] = [];
  classSizes.forEach((n, c) => {
    for (let k = 0; k < n; k++) labels.push(c);
  });
  // Interleave classes so that a split that ignored labels would not look stratified by accident.
  const order = labels.map((_, i) => i).sort((a, b) => ((a * 7919) % labels.length) - ((b * 7919) % labels.length));
  const count = labels.length;
  const features = new Float32Array(count * SIZE);
  const out = new Int32Array(count);
  order.forEach((from, i) => {
    out[i] = labels[from]!;
    features.set([i, -i, labels[from]!], i * SIZE);
  });
  return { features, labels: out, count };
}

const names = (k: number): string[] => Array.from({ length: k }, (_, c) => `class-${c}`);
const tracedIds = (s: LabelledSamples): number[] => Array.from({ length: s.count }, (_, i) => s.features[i * SIZE]!);

function expectDatasetError(fn: () => unknown, code: DatasetErrorCode, ...words: string[]): void {
  let caught: unknown;
  try {
    fn();
  } catch (error) {
    caught = error;
  }
  expect(caught).toBeInstanceOf(DatasetError);
  expect((caught as DatasetError).code).toBe(code);
  for (const word of words) expect((caught as Error).message).toContain(word);
}

describe('stratifiedSplit', () => {
  const sizes = [300, 300, 300, 300];
  const samples = tracedSamples(sizes);
  const fractions = { validation: 0.15, test: 0.15 };
  const split = stratifiedSplit(samples, SHAPE, names(4), fractions, 7);

  it('cuts every class by the fractions', () => {
    for (const [part, expected] of [
      [split.train, 210],
      [split.val, 45],
      [split.test, 45],
    ] as const) {
      expect(classCounts(part, 4)).toEqual([expected, expected, expected, expected]);
    }
    expect(split.train.count + split.val.count + split.test.count).toBe(1200);
    expect(split.inputShape).toEqual(SHAPE);
    expect(split.classNames).toEqual(names(4));
  });

  it('keeps each split stratified for unequal classes too', () => {
    const uneven = [40, 100, 700];
    const s = stratifiedSplit(tracedSamples(uneven), SHAPE, names(3), { validation: 0.2, test: 0.1 }, 1);
    expect(classCounts(s.val, 3)).toEqual([8, 20, 140]);
    expect(classCounts(s.test, 3)).toEqual([4, 10, 70]);
    expect(classCounts(s.train, 3)).toEqual([28, 70, 490]);
  });

  it('puts every sample in exactly one split and keeps its features with its label', () => {
    const seen = [...tracedIds(split.train), ...tracedIds(split.val), ...tracedIds(split.test)];
    expect(seen.length).toBe(samples.count);
    expect(new Set(seen).size).toBe(samples.count);
    for (const part of [split.train, split.val, split.test]) {
      for (let k = 0; k < part.count; k++) {
        const id = part.features[k * SIZE]!;
        expect(part.features[k * SIZE + 1]).toBe(-id);
        expect(part.labels[k]).toBe(samples.labels[id]);
        expect(part.features[k * SIZE + 2]).toBe(samples.labels[id]);
      }
    }
  });

  it('copies the features, so changing a split leaves the samples alone', () => {
    const before = Float32Array.from(samples.features);
    split.train.features.fill(-99);
    expect(samples.features).toEqual(before);
  });

  it('is deterministic in the seed and differs for another seed', () => {
    const a = stratifiedSplitIndices(samples.labels, names(4), fractions, 'run-1');
    const b = stratifiedSplitIndices(samples.labels, names(4), fractions, 'run-1');
    const c = stratifiedSplitIndices(samples.labels, names(4), fractions, 'run-2');
    expect(a).toEqual(b);
    expect(Array.from(c.test)).not.toEqual(Array.from(a.test));
    expect(new Set(c.test).size).toBe(180);
  });

  it('shuffles each split instead of grouping it by class', () => {
    let changes = 0;
    for (let k = 1; k < split.train.count; k++) if (split.train.labels[k] !== split.train.labels[k - 1]) changes++;
    expect(changes).toBeGreaterThan(split.train.count / 2);
  });

  it('gives every class of at least 3 samples one sample in each split and keeps one for training', () => {
    const tiny = [3, 4, 5, 9];
    for (const f of [
      { validation: 0.05, test: 0.05 },
      { validation: 0.45, test: 0.45 },
      { validation: 0.7, test: 0.2 },
    ]) {
      const s = stratifiedSplit(tracedSamples(tiny), SHAPE, names(4), f, 3);
      for (const part of [s.train, s.val, s.test]) {
        for (const n of classCounts(part, 4)) expect(n).toBeGreaterThanOrEqual(1);
      }
      expect(s.train.count + s.val.count + s.test.count).toBe(21);
    }
  });

  it('refuses a class too small to split, naming it and the fix', () => {
    expectDatasetError(() => stratifiedSplit(tracedSamples([50, 2, 50]), SHAPE, names(3), fractions, 1), 'NB_DATASET_CLASS_TOO_SMALL', 'class-1', '2 samples', 'at least 3');
    expectDatasetError(() => stratifiedSplit(tracedSamples([50, 50, 0]), SHAPE, names(3), fractions, 1), 'NB_DATASET_CLASS_TOO_SMALL', 'class-2', '0 samples');
    expect(() => classSplitSizes(2, fractions)).toThrow(DatasetError);
  });

  it('refuses fractions that leave no training data or are out of range', () => {
    const s = tracedSamples([20, 20]);
    expectDatasetError(() => stratifiedSplit(s, SHAPE, names(2), { validation: 0.5, test: 0.5 }, 1), 'NB_DATASET_NO_TRAINING_DATA', 'smaller than 1');
    expectDatasetError(() => stratifiedSplit(s, SHAPE, names(2), { validation: 0.6, test: 0.7 }, 1), 'NB_DATASET_NO_TRAINING_DATA');
    for (const bad of [0, -0.1, 1, Number.NaN]) {
      expectDatasetError(() => stratifiedSplit(s, SHAPE, names(2), { validation: bad, test: 0.1 }, 1), 'NB_DATASET_BAD_OPTIONS', 'validation');
      expectDatasetError(() => stratifiedSplit(s, SHAPE, names(2), { validation: 0.1, test: bad }, 1), 'NB_DATASET_BAD_OPTIONS', 'test');
    }
  });

  it('refuses samples that do not fit their shape, labels that are no class, and a single class', () => {
    const s = tracedSamples([20, 20]);
    expectDatasetError(() => stratifiedSplit(s, [4], names(2), fractions, 1), 'NB_DATASET_SHAPE_MISMATCH', '160 feature values');
    expectDatasetError(() => stratifiedSplit({ ...s, count: 39 }, SHAPE, names(2), fractions, 1), 'NB_DATASET_SHAPE_MISMATCH');
    expectDatasetError(() => stratifiedSplit(s, [0], names(2), fractions, 1), 'NB_DATASET_SHAPE_MISMATCH');
    const badLabels = { ...s, labels: Int32Array.from(s.labels, (l, i) => (i === 5 ? 2 : l)) };
    expectDatasetError(() => stratifiedSplit(badLabels, SHAPE, names(2), fractions, 1), 'NB_DATASET_BAD_LABEL', 'sample 5', 'label 2');
    const oneClass = tracedSamples([30]);
    expectDatasetError(() => stratifiedSplit(oneClass, SHAPE, names(1), fractions, 1), 'NB_DATASET_TOO_FEW_CLASSES', 'at least 2');
  });
});

describe('classCounts', () => {
  it('counts the samples of each class, and refuses a label that is no class', () => {
    const part = { labels: Int32Array.from([2, 0, 2, 2, 1, 0, 9]), count: 6 };
    expect(classCounts(part, 3)).toEqual([2, 1, 3]);
    expect(classCounts(part, 4)).toEqual([2, 1, 3, 0]);
    expect(() => classCounts({ labels: part.labels, count: 7 }, 3)).toThrow(DatasetError);
  });
});

describe('prepareDataset', () => {
  it('turns the demo source into a stratified three-way split of the generated tiles', () => {
    const source = { kind: 'demo-tiles' as const, samplesPerClass: 40, seed: 5 };
    const prepared = prepareDataset(source, { validation: 0.15, test: 0.15 }, 1);
    expect(prepared.inputShape).toEqual([16, 16, 1]);
    expect(prepared.classNames).toEqual(['clean', 'crack', 'chip', 'glaze-spot']);
    expect(classCounts(prepared.train, 4)).toEqual([28, 28, 28, 28]);
    expect(classCounts(prepared.val, 4)).toEqual([6, 6, 6, 6]);
    expect(classCounts(prepared.test, 4)).toEqual([6, 6, 6, 6]);
    // Every prepared tile is one of the generated tiles, each used once.
    const tiles = generateDemoTiles({ samplesPerClass: 40, seed: 5 });
    const key = (f: Float32Array, i: number): string => Buffer.from(f.buffer, f.byteOffset + i * 1024, 1024).toString('base64');
    const generated = new Set(Array.from({ length: tiles.count }, (_, i) => key(tiles.features, i)));
    const used = [prepared.train, prepared.val, prepared.test].flatMap((p) => Array.from({ length: p.count }, (_, i) => key(p.features, i)));
    expect(new Set(used).size).toBe(160);
    for (const k of used) expect(generated.has(k)).toBe(true);
    // The split seed changes the split, not the tiles.
    const other = prepareDataset(source, { validation: 0.15, test: 0.15 }, 2);
    expect(Buffer.from(other.test.features.buffer).equals(Buffer.from(prepared.test.features.buffer))).toBe(false);
  });
});
