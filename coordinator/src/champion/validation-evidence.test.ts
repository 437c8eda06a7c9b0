import { describe, expect, it } from 'vitest';
import { rankByValidation, type SearchEvidence } from './validation-evidence.js';

const r = (id: string, genomeHash: string, seq: number, valAccuracy: number | null, epochs: number, params = 100): SearchEvidence => ({ id, genomeHash, seq, valAccuracy, params, job: { budget: { epochs } } });

describe('rankByValidation', () => {
  it('scores each genome by its results at its largest budget, their mean', () => {
    const ranked = rankByValidation([
      r('a-rung0', 'a', 0, 0.95, 1), // a short training that looked better than the longer one
      r('a-rung1', 'a', 5, 0.8, 3),
      r('b1', 'b', 1, 0.9, 3),
      r('b2', 'b', 7, 0.84, 3),
      r('c', 'c', 2, null, 3),
    ]);
    expect(ranked.map((e) => [e.genomeHash, e.id, e.valAccuracy.toFixed(2), e.results])).toEqual([
      ['b', 'b1', '0.87', 2],
      ['a', 'a-rung1', '0.80', 1],
    ]);
  });

  it('breaks ties by fewer parameters, then the earlier result', () => {
    const ranked = rankByValidation([r('x', 'x', 3, 0.9, 2, 500), r('y', 'y', 4, 0.9, 2, 200), r('z', 'z', 1, 0.9, 2, 200)]);
    expect(ranked.map((e) => e.id)).toEqual(['z', 'y', 'x']);
  });
});
