import { describe, expect, it } from 'vitest';
import { createRandom, regressionMetrics } from '@netbreeder/shared-types';
import { averagePredictions, meanOfOutputs } from './ensemble-average.js';

describe('a regression ensemble averages its members predicted numbers', () => {
  it('predicts the mean of the members outputs, sample by sample (hand-computed)', () => {
    const mean = meanOfOutputs([Float32Array.of(1, 2, 3), Float32Array.of(3, 4, 11)]);
    expect(Array.from(mean)).toEqual([2, 3, 7]);
    expect(Array.from(meanOfOutputs([Float32Array.of(-0.5, 4)]))).toEqual([-0.5, 4]);
  });

  it('scores an RMSE no worse than its members average RMSE (the mean is convex), and better when their errors differ', () => {
    const r = createRandom('ensemble average regression');
    const targets = Float32Array.from({ length: 200 }, () => r.next() * 4 - 2);
    // Three members: the target plus each its own error (a bias and noise of its own).
    const members = [0.3, -0.2, 0.1].map((bias) => Float32Array.from(targets, (t) => t + bias + (r.next() - 0.5)));
    const rmse = (p: Float32Array) => regressionMetrics(targets, p).rmse;
    const averaged = rmse(meanOfOutputs(members));
    const membersMean = members.reduce((a, m) => a + rmse(m), 0) / members.length;
    expect(averaged).toBeLessThan(membersMean);
    expect(averaged).toBeLessThan(Math.min(...members.map(rmse)));
  });

  it('refuses members scored on different samples, and no members at all', () => {
    expect(() => meanOfOutputs([Float32Array.of(1, 2), Float32Array.of(1)])).toThrow(/member 1 gives 1 outputs/);
    expect(() => meanOfOutputs([])).toThrow(/at least one member/);
  });
});

describe('a classification ensemble averages softmax probabilities', () => {
  it('takes the most probable class of the mean, not a vote', () => {
    // Sample 0: member A 0.9 for class 0, members B and C 0.45 / 0.55 → mean favours class 0 though two of three vote 1.
    const a = Float32Array.of(0.9, 0.1);
    const b = Float32Array.of(0.45, 0.55);
    const { mean, predictions } = averagePredictions([a, b, b], 2);
    expect(mean[0]).toBeCloseTo(0.6, 6);
    expect(Array.from(predictions)).toEqual([0]);
  });
});
