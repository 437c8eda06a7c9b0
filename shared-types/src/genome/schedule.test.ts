import { describe, expect, it } from 'vitest';
import { learningRateAt } from './schedule.js';
import type { LearningRateSchedule } from './genome-schema.js';

const at = (step: number, totalSteps = 100, stepsPerEpoch = 10) => ({ step, totalSteps, stepsPerEpoch });

describe('learningRateAt', () => {
  it('keeps the rate without a schedule or with a constant one', () => {
    expect(learningRateAt(0.01, undefined, at(50))).toBe(0.01);
    expect(learningRateAt(0.01, { kind: 'constant' }, at(99))).toBe(0.01);
  });

  it("follows the published cosine annealing formula (Loshchilov & Hutter, SGDR, ICLR 2017: lr_t = lr_min + ½(lr_max − lr_min)(1 + cos(π t/T)))", () => {
    const lrMax = 0.02;
    const minFactor = 0.1;
    const lrMin = lrMax * minFactor;
    const T = 100;
    for (const t of [0, 1, 10, 25, 50, 75, 99, 100]) {
      const published = lrMin + 0.5 * (lrMax - lrMin) * (1 + Math.cos((Math.PI * t) / T));
      expect(learningRateAt(lrMax, { kind: 'cosine', minFactor, warmupEpochs: 0 }, at(t, T))).toBeCloseTo(published, 12);
    }
    // Worked by hand: halfway the rate is the mean of the two ends; at the start the maximum.
    expect(learningRateAt(lrMax, { kind: 'cosine', minFactor, warmupEpochs: 0 }, at(50, T))).toBeCloseTo((lrMax + lrMin) / 2, 12);
    expect(learningRateAt(lrMax, { kind: 'cosine', minFactor: 0, warmupEpochs: 0 }, at(0, T))).toBe(lrMax);
  });

  it('warms up linearly over its epochs, then decays over the rest', () => {
    const s = { kind: 'cosine', minFactor: 0, warmupEpochs: 2 } as const; // 20 warm-up steps of 100
    expect(learningRateAt(0.01, s, at(0))).toBeCloseTo(0.01 / 20, 12);
    expect(learningRateAt(0.01, s, at(9))).toBeCloseTo(0.005, 12);
    expect(learningRateAt(0.01, s, at(19))).toBeCloseTo(0.01, 12);
    expect(learningRateAt(0.01, s, at(20))).toBeCloseTo(0.01, 12);
    expect(learningRateAt(0.01, s, at(60))).toBeCloseTo(0.005, 12); // halfway through the 80 decay steps
    // Warm-up never takes more than half the training.
    expect(learningRateAt(0.01, { ...s, warmupEpochs: 50 }, at(49))).toBeCloseTo(0.01, 12);
  });

  it('multiplies by the factor at each fraction of a step schedule (common practice: 0.1)', () => {
    const s: LearningRateSchedule = { kind: 'step', factor: 0.1, atFractions: [0.5, 0.75], warmupEpochs: 0 };
    expect(learningRateAt(1, s, at(49))).toBe(1);
    expect(learningRateAt(1, s, at(50))).toBeCloseTo(0.1, 12);
    expect(learningRateAt(1, s, at(74))).toBeCloseTo(0.1, 12);
    expect(learningRateAt(1, s, at(75))).toBeCloseTo(0.01, 12);
  });
});
