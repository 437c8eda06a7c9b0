import { describe, expect, it } from 'vitest';
import { fitnessInWords, regressionFitness, rmseFromFitness } from './regression-metrics.js';

describe('a search fitness told to a person', () => {
  it('gives a classifier a percentage and a regression run its RMSE in the target units', () => {
    expect(fitnessInWords(0.9712)).toBe('97.12%');
    // Standardised RMSE 0.25 with a target standard deviation of 7.8 mpg: 1.95 mpg (hand-computed).
    expect(fitnessInWords(regressionFitness(0.25), { std: 7.8 })).toBe('RMSE 1.95');
    expect(rmseFromFitness(regressionFitness(0.25))).toBeCloseTo(0.25, 12);
  });
});
