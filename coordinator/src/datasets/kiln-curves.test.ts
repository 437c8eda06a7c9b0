import { describe, expect, it } from 'vitest';
import { generateKilnCurves, KILN_OUTCOMES } from './kiln-curves.js';

describe('invented kiln firing curves', () => {
  it('are seeded, one outcome per firing, firingsPerOutcome of each, readings in time order', () => {
    const text = generateKilnCurves({ firingsPerOutcome: 7, seed: 4 });
    expect(generateKilnCurves({ firingsPerOutcome: 7, seed: 4 })).toBe(text);
    expect(generateKilnCurves({ firingsPerOutcome: 7, seed: 5 })).not.toBe(text);
    const rows = text.trim().split('\n').slice(1).map((l) => l.split(','));
    const outcome = new Map<string, string>();
    const last = new Map<string, number>();
    for (const [firing, minute, , , o] of rows) {
      expect(outcome.get(firing!) ?? o).toBe(o);
      outcome.set(firing!, o!);
      expect(Number(minute)).toBeGreaterThan(last.get(firing!) ?? -1);
      last.set(firing!, Number(minute));
    }
    expect(KILN_OUTCOMES.map((k) => [...outcome.values()].filter((o) => o === k).length)).toEqual([7, 7, 7]);
  });

  it('cracked firings cool faster than good ones, underfired ones peak lower or hold shorter', () => {
    const rows = generateKilnCurves({ firingsPerOutcome: 30, seed: 1 }).trim().split('\n').slice(1).map((l) => l.split(','));
    const peak = new Map<string, number>();
    const length = new Map<string, number>();
    const outcomeOf = new Map<string, string>();
    for (const [f, , temp, , o] of rows) {
      peak.set(f!, Math.max(peak.get(f!) ?? 0, Number(temp)));
      length.set(f!, (length.get(f!) ?? 0) + 1);
      outcomeOf.set(f!, o!);
    }
    const mean = (o: string, m: Map<string, number>) => {
      const v = [...m].filter(([f]) => outcomeOf.get(f) === o).map(([, x]) => x);
      return v.reduce((a, b) => a + b, 0) / v.length;
    };
    expect(mean('cracked', length)).toBeLessThan(mean('good', length));
    expect(mean('underfired', peak)).toBeLessThan(mean('good', peak));
  });
});
