import { beforeAll, describe, expect, it } from 'vitest';
import { analyzeGenome, defaultSearchSpace, fitReferenceNetwork, referenceGenome, type DataShape } from '@netbreeder/shared-types';
import { initBackend } from './backend.js';
import { buildModel } from './build-model.js';
import { syntheticSamples } from './synthetic-samples.js';
import { trainGenome } from './train-genome.js';

/** The run's reference networks (shared-types/src/genome/reference-networks.ts) build and train on the portable backend. */
beforeAll(async () => {
  expect((await initBackend()).backend).toBe('wasm');
});

describe.each([
  ['image', { inputShape: [12, 12, 1], numClasses: 4 }],
  ['flat', { inputShape: [6], numClasses: 3 }],
] as const)('the %s reference network', (_kind, data: DataShape) => {
  it('builds with the parameter count analyzeGenome gives (reference library: TensorFlow.js countParams)', () => {
    const genome = referenceGenome(data);
    const analysis = analyzeGenome(genome, data);
    const model = buildModel(genome, data, 1);
    try {
      expect(analysis.ok && model.countParams()).toBe(analysis.ok ? analysis.analysis.params : -1);
    } finally {
      model.dispose();
    }
  });

  it('trains a few epochs on a few samples, as written and as scaled down to a tight space', async () => {
    const train = syntheticSamples(data, 48, 1);
    const val = syntheticSamples(data, 24, 2);
    const tight = fitReferenceNetwork(data, { ...defaultSearchSpace(), maxParams: data.inputShape.length === 3 ? 1500 : 600 });
    expect(tight.ok && tight.adjustments.some((a) => a.startsWith('widths'))).toBe(true);
    for (const genome of [referenceGenome(data), tight.ok ? tight.genome : referenceGenome(data)]) {
      const outcome = await trainGenome({ genome, data, train, val, budget: { epochs: 2, maxSeconds: 60 }, seed: 3 });
      expect(outcome.epochsRun).toBe(2);
      expect(outcome.valAccuracy).not.toBeNull();
      expect(outcome.history.map((h) => h.epoch)).toEqual([1, 2]);
      expect(Number.isFinite(outcome.trainLoss)).toBe(true);
    }
  }, 60_000);
});
