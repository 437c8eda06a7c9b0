import { describe, expect, it } from 'vitest';
import { macroF1, majorityClassBaseline, perClassFigures } from './class-metrics.js';

// A hand-worked example (rows: true class, columns: predicted class):
//          a  b  c
//   a   [  8, 2, 0 ]   support 10
//   b   [  1, 3, 1 ]   support 5
//   c   [  0, 0, 0 ]   support 0, predicted once
const CONFUSION = [
  [8, 2, 0],
  [1, 3, 1],
  [0, 0, 0],
];

describe('per-class figures', () => {
  it('match the hand-computed precision, recall and F1', () => {
    const [a, b, c] = perClassFigures(CONFUSION);
    // a: precision 8/9, recall 8/10, F1 = 2·(8/9)(8/10)/((8/9)+(8/10)) = 16/19
    expect(a!.precision).toBeCloseTo(8 / 9, 12);
    expect(a!.recall).toBeCloseTo(0.8, 12);
    expect(a!.f1).toBeCloseTo(16 / 19, 12);
    expect(a!.support).toBe(10);
    // b: precision 3/5, recall 3/5, F1 3/5
    expect(b).toEqual({ precision: 0.6, recall: 0.6, f1: expect.closeTo(0.6, 12), support: 5 });
    // c: predicted once, never right, no sample: precision 0, recall undefined
    expect(c).toEqual({ precision: 0, recall: null, f1: null, support: 0 });
    expect(macroF1([a!, b!, c!])).toBeCloseTo((16 / 19 + 0.6) / 2, 12);
  });

  it('say a class that is never predicted has no precision, and one never right has F1 0', () => {
    const [x, y] = perClassFigures([
      [0, 4],
      [0, 6],
    ]);
    expect(x).toEqual({ precision: null, recall: 0, f1: null, support: 4 });
    expect(y!.precision).toBeCloseTo(0.6, 12);
    expect(perClassFigures([[0, 1], [1, 0]])[0]).toEqual({ precision: 0, recall: 0, f1: 0, support: 1 });
  });
});

describe('the majority-class baseline', () => {
  it('predicts the most common training class and is scored on the test split', () => {
    // the training split's counts make b the majority; on test, 5 of 15 samples are b
    expect(majorityClassBaseline([30, 40, 5], CONFUSION)).toEqual({ classIndex: 1, accuracy: 5 / 15 });
    // a tie goes to the first class
    expect(majorityClassBaseline([10, 10, 1], CONFUSION)).toEqual({ classIndex: 0, accuracy: 10 / 15 });
  });
});
