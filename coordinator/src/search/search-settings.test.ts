import { describe, expect, it } from 'vitest';
import { RunConfigSchema } from '@netbreeder/shared-types';
import { resolveSearchSettings, SEARCH_SETTING_DEFAULTS } from './search-settings.js';
import { LOWEST_RUNG_SAMPLES, rungEpochsFor } from './rung-epochs.js';

describe('resolveSearchSettings', () => {
  it('fills the defaults', () => {
    expect(resolveSearchSettings({ populationSize: 5, sampleSize: 2 })).toEqual({
      populationSize: 5, sampleSize: 2, initialMutations: 2, randomMutations: 12, eta: 3, minEpochs: 1, maxEpochs: 9, objective: 'params', start: 'minimal', promoteReference: false, parents: 'first-rung',
    });
  });

  it('has the same defaults as the run file schema', () => {
    const search = RunConfigSchema.properties.search.properties;
    expect(search.eta.default).toBe(SEARCH_SETTING_DEFAULTS.eta);
    // No schema default for the rungs: a new run derives them from its training split
    // (rung-epochs.ts); the algorithm's own defaults are that rule's from 1,800 samples up.
    expect(search.minEpochs.default).toBeUndefined();
    expect(search.maxEpochs.default).toBeUndefined();
    expect(rungEpochsFor(LOWEST_RUNG_SAMPLES, {})).toEqual({ minEpochs: SEARCH_SETTING_DEFAULTS.minEpochs, maxEpochs: SEARCH_SETTING_DEFAULTS.maxEpochs });
    expect(search.objective.default).toBe(SEARCH_SETTING_DEFAULTS.objective);
    // The one exception: a run file starts from the hand-made family, while a stored run without
    // the setting predates it and started from minimal genomes.
    expect(search.start.default).toBe('family');
    expect(SEARCH_SETTING_DEFAULTS.start).toBe('minimal');
    expect(search.promoteReference.default).toBe(SEARCH_SETTING_DEFAULTS.promoteReference);
    expect(search.parents.default).toBe(SEARCH_SETTING_DEFAULTS.parents);
  });

  it('names the bad value', () => {
    const base = { populationSize: 5, sampleSize: 2 };
    expect(() => resolveSearchSettings({ ...base, eta: 1 })).toThrow(/eta must be a whole number ≥ 2, got 1/);
    expect(() => resolveSearchSettings({ ...base, minEpochs: 0 })).toThrow(/minEpochs must be a whole number ≥ 1/);
    expect(() => resolveSearchSettings({ ...base, minEpochs: 4, maxEpochs: 3 })).toThrow(/maxEpochs \(3\) must be at least minEpochs \(4\)/);
    expect(() => resolveSearchSettings({ ...base, objective: 'weight' as never })).toThrow(/objective must be one of params, flops, latency, got weight/);
    expect(() => resolveSearchSettings({ ...base, start: 'linear' as never })).toThrow(/start must be one of family, minimal, mixed, got linear/);
    expect(() => resolveSearchSettings({ ...base, parents: 'oldest' as never })).toThrow(/parents must be one of first-rung, highest-rung, got oldest/);
  });
});
