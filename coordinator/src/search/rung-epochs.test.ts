import { describe, expect, it } from 'vitest';
import { describeSearchMethod, rungEpochsFor } from './rung-epochs.js';

describe('rungEpochsFor', () => {
  it('gives the lowest rung at least 1,800 training samples and the top rung nine times as many epochs', () => {
    expect(rungEpochsFor(3000, {})).toEqual({ minEpochs: 1, maxEpochs: 9 });
    expect(rungEpochsFor(1800, {})).toEqual({ minEpochs: 1, maxEpochs: 9 });
    expect(rungEpochsFor(1799, {})).toEqual({ minEpochs: 2, maxEpochs: 18 });
    expect(rungEpochsFor(600, {})).toEqual({ minEpochs: 3, maxEpochs: 27 });
    expect(rungEpochsFor(1, {})).toEqual({ minEpochs: 1000, maxEpochs: 1000 });
  });

  it("keeps the run file's numbers", () => {
    expect(rungEpochsFor(600, { minEpochs: 1, maxEpochs: 9 })).toEqual({ minEpochs: 1, maxEpochs: 9 });
    expect(rungEpochsFor(600, { minEpochs: 2 })).toEqual({ minEpochs: 2, maxEpochs: 18 });
    expect(rungEpochsFor(600, { maxEpochs: 40 })).toEqual({ minEpochs: 3, maxEpochs: 40 });
    // A top rung below the derived lowest one: a single rung of that length.
    expect(rungEpochsFor(600, { maxEpochs: 2 })).toEqual({ minEpochs: 2, maxEpochs: 2 });
  });

  it('refuses a training split that is no positive whole number', () => {
    expect(() => rungEpochsFor(0, {})).toThrow(/positive whole number/);
    expect(() => rungEpochsFor(2.5, {})).toThrow(/positive whole number/);
  });

  it('names the rungs of the successive-halving methods', () => {
    expect(describeSearchMethod({ algorithm: 'asha-evolution', eta: 3, minEpochs: 3, maxEpochs: 27 })).toBe('asha-evolution, rungs of 3, 9 and 27 epochs');
    expect(describeSearchMethod({ algorithm: 'asha', eta: 3, minEpochs: 1, maxEpochs: 20 })).toBe('asha, rungs of 1, 3, 9 and 20 epochs');
    expect(describeSearchMethod({ algorithm: 'asha', eta: 3, minEpochs: 4, maxEpochs: 4 })).toBe('asha, one rung of 4 epochs');
    expect(describeSearchMethod({ algorithm: 'aging-evolution', eta: 3, minEpochs: 1, maxEpochs: 9 })).toBe('aging-evolution');
    // A stored run from before the rule, read without its rungs: the name alone.
    expect(describeSearchMethod({ algorithm: 'asha' })).toBe('asha');
  });
});
