import { describe, expect, it } from 'vitest';
import { parseRunConfig } from '../config/run-config.js';
import { loadDataset } from './load-dataset.js';

/** `split.seed` fixes the split on its own, so runs with different search seeds can share it. */
describe('split.seed', () => {
  const config = (seed: number, splitSeed?: number) =>
    parseRunConfig({ seed, dataset: { kind: 'demo-tiles', samplesPerClass: 20, seed: 3 }, split: splitSeed === undefined ? {} : { seed: splitSeed } });
  const testFeatures = async (seed: number, splitSeed?: number) => Array.from((await loadDataset(config(seed, splitSeed))).dataset.test.features.slice(0, 200));

  it('gives the same split whatever the run seed', async () => {
    expect(await testFeatures(1, 42)).toEqual(await testFeatures(2, 42));
  });

  it('is the run seed when absent, so other run seeds split differently', async () => {
    expect(await testFeatures(1)).toEqual(await testFeatures(9, 1));
    expect(await testFeatures(1)).not.toEqual(await testFeatures(2));
  });
});
