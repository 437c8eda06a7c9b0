import { describe, expect, it } from 'vitest';
import { SEARCH_DECISION_VERSION, type SearchDecision } from '@netbreeder/shared-types';
import { withFitnessNames } from './fitness-names.js';
import { describeChoice } from './champion-choice.js';
import { explainDecision } from './explain-lineage.js';

/** A regression run's exported words: no key names its fitness an accuracy, and the sentences give validation RMSE in the target's units. */

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

describe('explainDecision', () => {
  it("tells a regression run's tournament in validation RMSE, never as a percentage", () => {
    const member = (hash: string, fitness: number) => ({ evaluationId: `r1-s${hash}-a1`, genomeHash: hash.repeat(64), fitness });
    const d: SearchDecision = { kind: 'parent-selected', version: SEARCH_DECISION_VERSION, reason: 'test', method: 'tournament', populationSize: 4, sampleSize: 2, drawn: [member('a', 0.8), member('b', 0.5)], winner: member('a', 0.8) };
    // fitness 0.8 → standardised RMSE 0.25 → 1 at std 4; fitness 0.5 → 1 → 4.
    expect(explainDecision(d, { std: 4 })).toBe('Its parent was chosen by drawing 2 of the 4 living members at random (`aaaaaaaaaaaa` RMSE 1, `bbbbbbbbbbbb` RMSE 4); the one of the lowest RMSE, `aaaaaaaaaaaa` (RMSE 1), won.');
    expect(explainDecision(d)).toContain('the most accurate of them, `aaaaaaaaaaaa` (80.0%), won.');
  });
});
