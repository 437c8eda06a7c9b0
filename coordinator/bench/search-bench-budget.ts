/**
 * The budget arithmetic of `npm run bench:search`, pure: how much a run spent, what it knew at each
 * fraction of its budget, and the spread of a figure over seeds.
 *
 * The unit is training samples seen (the `samplesSeen` of each search result, summed): it counts
 * work, not time, so a machine shared with other jobs slows a run down without changing what the
 * budget buys. Validation passes and the champion's final training are not counted.
 */

/** One recorded search result, in the order the coordinator recorded it. */
export interface SpentEvaluation {
  evaluationId: string;
  /** Training samples seen (epochs run × training samples, or fewer when a limit cut it short). */
  samples: number;
  valAccuracy: number;
}

/** What a run knew once a share of its budget was spent. */
export interface FractionPoint {
  fraction: number;
  /** Best validation accuracy among the evaluations counted at this fraction. */
  bestValAccuracy: number;
  /** Samples those evaluations spent (at least `fraction × budget`, unless the run ended short). */
  spent: number;
  /** How many evaluations were counted. */
  evaluations: number;
}

/**
 * Evaluations counted at `limit`: in record order, every evaluation that started the count below
 * `limit`, so the one that crosses it is included and the overshoot is at most one evaluation. The
 * same rule stops a run: the coordinator is told to finish as soon as the spend reaches the budget.
 */
export function countedWithin(evaluations: readonly SpentEvaluation[], limit: number): SpentEvaluation[] {
  const out: SpentEvaluation[] = [];
  let spent = 0;
  for (const e of evaluations) {
    if (spent >= limit) break;
    out.push(e);
    spent += e.samples;
  }
  return out;
}

/** Best validation accuracy and spend at each fraction of `budget` (fractions in (0, 1]). */
export function budgetCurve(evaluations: readonly SpentEvaluation[], budget: number, fractions: readonly number[]): FractionPoint[] {
  if (!(budget > 0)) throw new RangeError(`budget must be a positive number of training samples, got ${budget}`);
  return fractions.map((fraction) => {
    if (!(fraction > 0 && fraction <= 1)) throw new RangeError(`a budget fraction lies in (0, 1], got ${fraction}`);
    const counted = countedWithin(evaluations, fraction * budget);
    return {
      fraction,
      bestValAccuracy: counted.reduce((best, e) => Math.max(best, e.valAccuracy), 0),
      spent: counted.reduce((sum, e) => sum + e.samples, 0),
      evaluations: counted.length,
    };
  });
}

/** Mean, sample standard deviation (0 for one value), minimum and maximum. */
export interface Spread {
  mean: number;
  std: number;
  min: number;
  max: number;
  n: number;
}

export function spread(values: readonly number[]): Spread {
  if (values.length === 0) throw new RangeError('spread of no values');
  const n = values.length;
  const mean = values.reduce((a, b) => a + b, 0) / n;
  const variance = n > 1 ? values.reduce((a, v) => a + (v - mean) ** 2, 0) / (n - 1) : 0;
  return { mean, std: Math.sqrt(variance), min: Math.min(...values), max: Math.max(...values), n };
}
