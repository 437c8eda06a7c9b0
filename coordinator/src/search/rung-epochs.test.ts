import { describe, expect, it } from 'vitest';
import { rungEpochsFor } from './rung-epochs.js';

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
});
