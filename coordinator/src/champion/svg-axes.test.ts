import { describe, expect, it } from 'vitest';
import type { EpochRecord } from '@netbreeder/shared-types';
import { niceTicks } from './svg-axes.js';
import { predictedActualSvg, residualHistogramSvg } from './regression-plots.js';
import { trainingCurveSvg } from './training-curve-svg.js';

/** The labels of a chart's x ticks (centred under the axis), y ticks (left of it), right-hand ticks, and its axis titles. */
function labels(svg: string) {
  const texts = [...svg.matchAll(/<text ([^>]*)>([^<]*)<\/text>/g)].map((m) => ({ attrs: m[1]!, text: m[2]! }));
  const of = (test: (attrs: string) => boolean) => texts.filter((t) => test(t.attrs)).map((t) => t.text);
  return {
    x: of((a) => /class="tick/.test(a) && a.includes('text-anchor="middle"')),
    y: of((a) => /class="tick/.test(a) && a.includes('text-anchor="end"')),
    right: of((a) => /class="tick/.test(a) && a.includes('text-anchor="start"')),
    titles: of((a) => a.includes('class="axis-title')),
  };
}

describe('niceTicks', () => {
  it('steps by 1, 2 or 5 times a power of ten inside the range (hand-checked values)', () => {
    expect(niceTicks(0, 1)).toEqual([0, 0.2, 0.4, 0.6, 0.8, 1]);
    expect(niceTicks(9.3, 46.6)).toEqual([10, 20, 30, 40]);
    expect(niceTicks(-0.37, 0.37)).toEqual([-0.2, 0, 0.2]); // 0.74 / 5 = 0.148, rounded up to 0.2
    expect(niceTicks(1, 8, 5)).toEqual([2, 4, 6, 8]);
    expect(niceTicks(3, 3)).toEqual([3]);
  });
});

describe("the report's charts carry tick values and a title on both axes", () => {
  // An invented kiln log: shrinkage in percent, actual against predicted.
  const actual = [6.2, 7.9, 9.4, 11.1, 12.8, 14.5];
  const predicted = [6.8, 7.5, 9.9, 10.6, 13.4, 13.9];

  it('predicted against actual', () => {
    const l = labels(predictedActualSvg(actual, predicted, 'shrinkage_pct'));
    expect(l.x).toEqual(niceTicks(6.2, 14.5).map(String));
    expect(l.x).toEqual(['8', '10', '12', '14']);
    expect(l.y).toEqual(l.x);
    expect(l.titles).toEqual(['actual shrinkage_pct', 'predicted shrinkage_pct']);
  });

  it('the residual histogram', () => {
    const l = labels(residualHistogramSvg(actual, predicted, 4));
    // Residuals ±0.6 at most: a range of 1.2 in about 5 steps, 0.24 rounded up to 0.5; the counts per bin (4 bins) 3, 0, 0, 3 → rows 0 … 3.
    expect(l.x).toEqual(['-0.5', '0', '0.5']);
    expect(l.y).toEqual(['0', '1', '2', '3']);
    expect(l.titles).toEqual(['predicted − actual (6 rows)', 'rows']);
  });

  it('the training curve: epochs, loss and, for a classifier, accuracy', () => {
    const curve: EpochRecord[] = [1.2, 0.8, 0.55, 0.42, 0.4].map((loss, i) => ({ epoch: i + 1, trainLoss: loss, trainAccuracy: 0.5 + i * 0.1, valLoss: null, valAccuracy: null, seconds: 1 }));
    const classifier = labels(trainingCurveSvg(curve, true));
    expect(classifier.x).toEqual(['1', '2', '3', '4', '5']);
    // Loss 0 … 1.2 in about 5 steps: 0.24 rounded up to 0.5.
    expect(classifier.y).toEqual(['0', '0.5', '1']);
    expect(classifier.right).toEqual(['0%', '25%', '50%', '75%', '100%']);
    expect(classifier.titles).toEqual(['epoch', 'training loss', 'training accuracy']);
    const regression = labels(trainingCurveSvg(curve, false));
    expect(regression.right).toEqual([]);
    expect(regression.titles).toEqual(['epoch', 'training loss']);
    expect(labels(trainingCurveSvg(curve.slice(0, 1), true)).x).toEqual(['1']);
  });
});
