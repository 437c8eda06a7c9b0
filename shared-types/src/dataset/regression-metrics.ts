import { InternalError } from '../errors/netbreeder-error.js';
/** How well predicted numbers match actual ones, in the units of the numbers given. */
export interface RegressionMetrics {
  /** Mean squared error. */
  mse: number;
  /** Root mean squared error. */
  rmse: number;
  /** Mean absolute error. */
  mae: number;
  /** Coefficient of determination, 1 − SSE / SST (SST around the actual values' own mean); 0 when SST is 0. */
  r2: number;
}

/** RMSE, MAE, MSE and R² of `predicted` against `actual` (same length, at least 1). Pure. */
export function regressionMetrics(actual: ArrayLike<number>, predicted: ArrayLike<number>): RegressionMetrics {
  const n = actual.length;
  if (n === 0 || predicted.length !== n) throw new InternalError(`regression metrics need equal, non-empty lists (got ${n} actual, ${predicted.length} predicted)`);
  let sum = 0;
  for (let i = 0; i < n; i++) sum += actual[i]!;
  const mean = sum / n;
  let sse = 0;
  let sst = 0;
  let abs = 0;
  for (let i = 0; i < n; i++) {
    const e = predicted[i]! - actual[i]!;
    sse += e * e;
    abs += Math.abs(e);
    sst += (actual[i]! - mean) ** 2;
  }
  const mse = sse / n;
  return { mse, rmse: Math.sqrt(mse), mae: abs / n, r2: sst > 0 ? 1 - sse / sst : 0 };
}

/**
 * The search's fitness of a regression network, larger is better and in (0, 1] like an accuracy:
 * 1 / (1 + RMSE) with the RMSE in standardised target units (so 0.5 means an RMSE of one standard
 * deviation of the training target, what always predicting the mean scores). Every part of the
 * search that ranks by validation accuracy ranks regression networks by it unchanged; it is never
 * shown to a person as an accuracy.
 */
export const regressionFitness = (standardizedRmse: number): number => 1 / (1 + (Number.isFinite(standardizedRmse) ? standardizedRmse : Infinity));

/** The standardised RMSE a {@link regressionFitness} came from. */
export const rmseFromFitness = (fitness: number): number => (fitness > 0 ? 1 / fitness - 1 : Infinity);

/**
 * A search fitness told to a person: a classifier's as a percentage (two decimals), a regression
 * run's (`target`: its scaling) as the validation RMSE in the target's units (4 significant digits).
 */
export const fitnessInWords = (fitness: number, target?: { std: number } | null): string =>
  target ? `RMSE ${Number((rmseFromFitness(fitness) * target.std).toPrecision(4))}` : `${(fitness * 100).toFixed(2)}%`;
