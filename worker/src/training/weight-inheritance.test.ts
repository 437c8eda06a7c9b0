import { describe, expect, it } from 'vitest';
import { planWeightCopy } from './weight-inheritance.js';

describe('planWeightCopy', () => {
  it('copies each weight whose name and shape match, and leaves new, renamed or reshaped ones fresh', () => {
    const parent = [
      { name: 'c1/kernel', shape: [3, 3, 1, 8] },
      { name: 'c1/bias', shape: [8] },
      { name: 'd1/kernel', shape: [128, 32] },
      { name: 'd1/bias', shape: [32] },
      { name: 'head.dense/kernel', shape: [32, 4] },
      { name: 'head.dense/bias', shape: [4] },
    ];
    const child = [
      { name: 'c1/kernel', shape: [3, 3, 1, 8] }, // same
      { name: 'c1/bias', shape: [8] }, // same
      { name: 'c2/kernel', shape: [3, 3, 8, 8] }, // inserted layer
      { name: 'c2/bias', shape: [8] },
      { name: 'd1/kernel', shape: [128, 48] }, // widened
      { name: 'd1/bias', shape: [48] },
      { name: 'head.dense/kernel', shape: [48, 4] }, // its input widened
      { name: 'head.dense/bias', shape: [4] }, // same
    ];
    const plan = planWeightCopy(child, parent);
    expect(plan.copies).toEqual([[0, 0], [1, 1], [7, 5]]);
    expect(plan.copied).toBe(3);
    expect(plan.total).toBe(8);
  });
  it('matches whole shapes, not only element counts, and copies nothing from an empty source', () => {
    expect(planWeightCopy([{ name: 'a/kernel', shape: [2, 6] }], [{ name: 'a/kernel', shape: [6, 2] }]).copied).toBe(0);
    expect(planWeightCopy([{ name: 'a/kernel', shape: [2] }], [])).toEqual({ copies: [], copied: 0, total: 1 });
  });
});
