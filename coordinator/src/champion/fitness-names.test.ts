import { describe, expect, it } from 'vitest';
import { withFitnessNames } from './fitness-names.js';
import { describeChoice } from './champion-choice.js';

describe('withFitnessNames', () => {
  it('renames every accuracy key at any depth and keeps the values', () => {
    const doc = {
      validation: { accuracy: 0.5, loss: 1 },
      members: [{ validationAccuracy: 0.4, testAccuracy: 0.25, genome: { nodes: [{ id: 'd1' }] } }],
      trainingCurve: [{ trainAccuracy: 0.2, valAccuracy: null }],
      line: 'text values are left alone',
      nothing: null,
    };
    expect(withFitnessNames(doc)).toEqual({
      validation: { fitness: 0.5, loss: 1 },
      members: [{ validationFitness: 0.4, testFitness: 0.25, genome: { nodes: [{ id: 'd1' }] } }],
      trainingCurve: [{ trainFitness: 0.2, valFitness: null }],
      line: 'text values are left alone',
      nothing: null,
    });
    expect(JSON.stringify(withFitnessNames(doc))).not.toMatch(/accuracy/i);
  });
});

describe('describeChoice', () => {
  it("says a regression pick's validation score as RMSE in the target's units", () => {
    // fitness 0.8 = 1 / (1 + 0.25): standardised RMSE 0.25, times std 4 = RMSE 1 in the target's units.
    const pick = { by: 'pick' as const, genomeHash: 'a'.repeat(64), evaluationId: 'r1-s3-a1', valAccuracy: 0.8 };
    expect(describeChoice(pick, { std: 4 })).toContain('validation RMSE 1)');
    expect(describeChoice(pick)).toContain('validation 80.00%');
    expect(describeChoice({ by: 'rule', rule: { maxParams: 500 } }, { std: 4 })).toBe("By the run's champion rule: the best validation RMSE among results with at most 500 parameters.");
  });
});
