import { genomeHash, type RegressionTestScores } from '@netbreeder/shared-types';
import type { EvaluationRecord, RunRecord, RunStore } from '../store/run-store.js';
import { runReference } from './reference-network.js';
import { fourDigits } from './regression-scores.js';

/** One of the best `champion.topK` genomes by validation evidence, as the champion phase considered it (the `champion-candidates` event's schema). */
export type { ConsideredGenome } from '@netbreeder/shared-types';

/**
 * The search result a reference network's final training starts from (its seed, its learning
 * curve), or null when the run has none. The reference is trained whatever its score, so its
 * source may be a result that does not count (`eligible` refuses it: a quarantined worker's, or
 * one verification rejected) when no other exists; the final training then takes the job from it
 * (the coordinator wrote that) but not its learning curve (see `ChampionPhase.ensureJobs`).
 */
export function referenceSource(
  store: RunStore,
  run: RunRecord,
  pool: ReadonlyArray<{ id: string; genomeHash: string; seq: number; valAccuracy: number | null }>,
  eligible: (ev: EvaluationRecord) => boolean = () => true,
): { id: string; genomeHash: string; seq: number; valAccuracy: number | null } | null {
  const fitted = runReference(run);
  if (!fitted?.ok) return null;
  const hash = genomeHash(fitted.genome);
  const ranked = pool.find((e) => e.genomeHash === hash);
  if (ranked) return ranked;
  // Not among the best: its first evaluation, proposal 0, every attempt of it (a failed one still
  // gives the seed and budget), a done one that counts first.
  const attempts = Array.from({ length: run.config.evaluation.maxAttempts }, (_, i) => store.getEvaluation(`${run.id}-s0-a${i + 1}`)).filter(
    (e): e is EvaluationRecord => e?.genomeHash === hash,
  );
  const done = attempts.filter((e) => e.state === 'done');
  const source = done.find(eligible) ?? done[0] ?? attempts.at(-1);
  return source ? { id: source.id, genomeHash: hash, seq: source.seq, valAccuracy: source.valAccuracy } : null;
}

/** The champion's test score beside the reference network's, with the one plain line every report shows. */
export interface ReferenceComparison {
  /** `scored`: both have their test score; `pending`: the final trainings are not done; `skipped`: the reference could not fit the search space, or its final training failed; `off`: the run has no reference. */
  state: 'scored' | 'pending' | 'skipped' | 'off';
  referenceGenomeHash: string | null;
  championTestAccuracy: number | null;
  referenceTestAccuracy: number | null;
  /** Champion minus reference, in percentage points of test accuracy (regression: null; see the RMSEs). */
  points: number | null;
  /** Regression runs: the test RMSE of each, in the target's units. */
  championTestRmse?: number | null;
  referenceTestRmse?: number | null;
  /** True when the champion is the reference network itself. */
  championIsReference: boolean;
  line: string;
}

const pct = (v: number) => `${(v * 100).toFixed(2)}%`;

type ScoredOnTest = { genomeHash: string; testAccuracy: number; testRegression?: RegressionTestScores };

/** The plain line for a regression champion and reference, by test RMSE in the target's units (smaller is better). Pure. */
export function regressionComparisonLine(champion: ScoredOnTest & { testRegression: RegressionTestScores }, reference: ScoredOnTest & { testRegression: RegressionTestScores }): string {
  const c = champion.testRegression.rmse;
  const r = reference.testRegression.rmse;
  if (champion.genomeHash === reference.genomeHash) return `the search did not beat the reference network; it is exported as the champion (test RMSE ${fourDigits(r)})`;
  const scores = `test RMSE ${fourDigits(c)} against ${fourDigits(r)}`;
  if (c < r) return `the search's champion beats the reference network: ${((1 - c / r) * 100).toFixed(1)}% lower error (${scores})`;
  if (c === r) return `the search's champion ties the reference network on the test split (test RMSE ${fourDigits(c)})`;
  return `the champion, chosen on validation, has a ${((c / r - 1) * 100).toFixed(1)}% higher error than the reference network on the test split (${scores}); it stays the exported champion, since no choice is made on test scores`;
}

/** The plain line for a champion and a reference both scored once on the test split. Pure. */
export function comparisonLine(champion: { genomeHash: string; testAccuracy: number }, reference: { genomeHash: string; testAccuracy: number }): string {
  if (champion.genomeHash === reference.genomeHash) {
    return `the search did not beat the reference network; it is exported as the champion (test accuracy ${pct(reference.testAccuracy)})`;
  }
  const points = (champion.testAccuracy - reference.testAccuracy) * 100;
  const scores = `test accuracy ${pct(champion.testAccuracy)} against ${pct(reference.testAccuracy)}`;
  if (points > 0) return `the search's champion beats the reference network by ${points.toFixed(2)} points (${scores})`;
  if (points === 0) return `the search's champion ties the reference network on the test split (${pct(champion.testAccuracy)})`;
  return (
    `the champion, chosen on validation, scores ${(-points).toFixed(2)} points below the reference network on the test split (${scores}); ` +
    'it stays the exported champion, since no choice is made on test scores'
  );
}

/** The comparison of `runId` as the store has it now. */
export function referenceComparison(store: RunStore, runId: string): ReferenceComparison {
  const none = { referenceGenomeHash: null, championTestAccuracy: null, referenceTestAccuracy: null, points: null, championIsReference: false };
  const skipped = store.events(runId, 'reference-skipped').at(-1)?.detail;
  if (skipped) return { ...none, state: 'skipped', line: `no reference network in this run: ${skipped.reason}` };
  const planned = store.events(runId, 'reference-network').at(-1)?.detail;
  if (!planned) return { ...none, state: 'off', line: 'no reference network in this run (search.reference is off)' };
  const scored = store.events(runId, 'reference-scored').at(-1)?.detail;
  const champion = store.getChampion(runId);
  if (!scored && champion && store.getRun(runId)?.state === 'finished') {
    return { ...none, state: 'skipped', referenceGenomeHash: planned.genomeHash, championTestAccuracy: champion.testAccuracy, line: 'no comparison with the reference network: its final training failed (see the events)' };
  }
  if (!scored || !champion) {
    return { ...none, state: 'pending', referenceGenomeHash: planned.genomeHash, championTestAccuracy: champion?.testAccuracy ?? null, referenceTestAccuracy: scored?.testAccuracy ?? null, line: 'the reference network is compared with the champion once both finished their final training' };
  }
  const own = store.events(runId, 'champion-candidate-scored').map((e) => e.detail).find((d) => d.evaluationId === champion.evaluationId);
  if (own?.testRegression && scored.testRegression) {
    const mine = { ...own, testRegression: own.testRegression };
    return {
      state: 'scored',
      referenceGenomeHash: scored.genomeHash,
      championTestAccuracy: null,
      referenceTestAccuracy: null,
      points: null,
      championTestRmse: own.testRegression.rmse,
      referenceTestRmse: scored.testRegression.rmse,
      championIsReference: champion.genomeHash === scored.genomeHash,
      line: regressionComparisonLine(mine, { ...scored, testRegression: scored.testRegression }),
    };
  }
  return {
    state: 'scored',
    referenceGenomeHash: scored.genomeHash,
    championTestAccuracy: champion.testAccuracy,
    referenceTestAccuracy: scored.testAccuracy,
    points: Number(((champion.testAccuracy - scored.testAccuracy) * 100).toFixed(4)),
    championIsReference: champion.genomeHash === scored.genomeHash,
    line: comparisonLine(champion, scored),
  };
}
