import type { RegressionTestScores } from '@netbreeder/shared-types';
import type { RunStore } from '../store/run-store.js';

/** A regression champion's test scores, from the event that recorded its one test scoring (empty for a classifier). */
export function championTestRegression(store: RunStore, runId: string, evaluationId: string): { testRegression?: RegressionTestScores } {
  const own = store.events(runId, 'champion-candidate-scored').map((e) => e.detail as { evaluationId: string; testRegression?: RegressionTestScores }).find((d) => d.evaluationId === evaluationId);
  return own?.testRegression ? { testRegression: own.testRegression } : {};
}

/** A regression figure as reports show it: 4 significant digits, no trailing zeros. */
export const fourDigits = (v: number): string => String(Number(v.toPrecision(4)));
