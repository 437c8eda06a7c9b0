import { describe, expect, it } from 'vitest';
import { hyperbandBrackets, rungBudgets } from './hyperband-brackets.js';

describe('hyperbandBrackets', () => {
  it('R = 81, eta = 3: the published starting sizes and resources of the five brackets', () => {
    // Source: Li, Jamieson, DeSalvo, Rostamizadeh, Talwalkar, "Hyperband", JMLR 18, 2018 (its worked
    // example for R = 81, eta = 3), as recorded in /work/shared/REFERENCES.md:
    // 81 at 1, 34 at 3, 15 at 9, 8 at 27, 5 at 81.
    const b = hyperbandBrackets(81, 3);
    expect(b.map((x) => x.s)).toEqual([4, 3, 2, 1, 0]);
    expect(b.map((x) => [x.configurations, x.resource])).toEqual([
      [81, 1],
      [34, 3],
      [15, 9],
      [8, 27],
      [5, 81],
    ]);
  });

  it('R = 81, eta = 3: the rounds inside each bracket keep floor(n / eta^i) at r · eta^i', () => {
    // The rounds follow from the paper's formulas n_i = floor(n · eta^-i), r_i = r · eta^i (same source);
    // the table values below are from memory of its worked example, and agree with the formulas.
    const b = hyperbandBrackets(81, 3);
    expect(b[0]!.rounds.map((r) => [r.configurations, r.resource])).toEqual([[81, 1], [27, 3], [9, 9], [3, 27], [1, 81]]);
    expect(b[1]!.rounds.map((r) => [r.configurations, r.resource])).toEqual([[34, 3], [11, 9], [3, 27], [1, 81]]);
    expect(b[2]!.rounds.map((r) => [r.configurations, r.resource])).toEqual([[15, 9], [5, 27], [1, 81]]);
    expect(b[3]!.rounds.map((r) => [r.configurations, r.resource])).toEqual([[8, 27], [2, 81]]);
    expect(b[4]!.rounds.map((r) => [r.configurations, r.resource])).toEqual([[5, 81]]);
    for (const bracket of b) expect(bracket.rounds.at(-1)!.resource).toBe(81); // every bracket ends at R
  });

  it('computes floor(log_eta R) exactly at powers of eta (no floating-point logarithm)', () => {
    // Math.log(1000) / Math.log(10) is 2.9999999999999996 in double precision; s_max must still be 3.
    expect(hyperbandBrackets(1000, 10)[0]!.s).toBe(3);
    expect(hyperbandBrackets(243, 3)[0]!.s).toBe(5);
    expect(hyperbandBrackets(1, 3)).toEqual([{ s: 0, configurations: 1, resource: 1, rounds: [{ configurations: 1, resource: 1 }] }]);
  });

  it('refuses a bad R or eta', () => {
    expect(() => hyperbandBrackets(0, 3)).toThrow(/R \(the maximum resource\) must be a whole number ≥ 1/);
    expect(() => hyperbandBrackets(81, 1)).toThrow(/eta must be a whole number ≥ 2/);
    expect(() => hyperbandBrackets(81, 2.5)).toThrow(/eta/);
  });
});

describe('rungBudgets', () => {
  it('multiplies by eta from the minimum and ends at the maximum', () => {
    expect(rungBudgets(1, 9, 3)).toEqual([1, 3, 9]);
    expect(rungBudgets(1, 81, 3)).toEqual([1, 3, 9, 27, 81]);
    expect(rungBudgets(1, 20, 3)).toEqual([1, 3, 9, 20]);
    expect(rungBudgets(2, 32, 4)).toEqual([2, 8, 32]);
    expect(rungBudgets(5, 5, 3)).toEqual([5]);
  });

  it('refuses a maximum below the minimum', () => {
    expect(() => rungBudgets(3, 2, 3)).toThrow(/maxEpochs must be a whole number ≥ 3/);
  });
});
