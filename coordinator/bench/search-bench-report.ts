/**
 * The figures of `npm run bench:search`, pure: the per-run outcomes summarised per task and method
 * (mean ± std over seeds), the comparison with the reference row, the printed table and the JSON
 * line.
 */
import type { SearchAlgorithmName } from '@netbreeder/shared-types';
import { spread, type FractionPoint, type Spread } from './search-bench-budget.js';
import type { ReferenceOutcome } from './search-bench-reference.js';
import type { TaskName } from './search-bench-tasks.js';

/** What one search run spent and found. */
export interface RunOutcome {
  task: TaskName;
  method: SearchAlgorithmName;
  seed: number;
  runId: string;
  state: string;
  /** Training samples of the search evaluations counted within the search budget (new work only: a continued training counts the epochs it added). */
  searchSamples: number;
  /** Training samples of every final training of the champion phase: the search's champion and the run's reference network (the held-back check's other side, or the report's comparison). */
  championSamples: number;
  evaluations: number;
  /** The most new samples one counted evaluation trained (the search may pass its budget by less than this). */
  largestEvaluation: number;
  /** Evaluations queued or training when the search budget was reached: given up by the finish. */
  discardedAtFinish: number;
  /** Results recorded after the budget was reached (none expected); not counted. */
  recordedAfterBudget: number;
  failedEvaluations: number;
  curve: FractionPoint[];
  championTestError: number | null;
  championParams: number | null;
  /** The champion's source is one of the evaluations counted within the search budget. */
  championWithinBudget: boolean | null;
  /** The champion's genome is the run's own reference network (the search found nothing better on validation). */
  championIsReference: boolean | null;
  /** Test error of the run's own reference network, retrained in the champion phase exactly as the champion was. */
  inRunReferenceTestError: number | null;
  /** The run's own line on whether the search paid (against that in-run reference). */
  verdict: string | null;
  /**
   * Diagnostic, not what the run exports: the test error of the mean of the softmax outputs of the
   * held-back check's two final trainings (the search's champion and the reference network); null
   * without the check (the reference network was the champion, or the check was off).
   */
  pairAverageTestError: number | null;
  /**
   * Diagnostic: both sides of the held-back check, each with its accuracy on the held-back
   * validation samples (what the check compared) and its test error (scored for the record, never
   * read by a choice); null without the check.
   */
  heldBackSides: { search: HeldBackSide; reference: HeldBackSide } | null;
  wallSeconds: number;
}

export interface HeldBackSide {
  heldBackAccuracy: number | null;
  testError: number | null;
}

export interface MethodSummary {
  task: TaskName;
  method: SearchAlgorithmName;
  runs: number;
  bestValAccuracy: Array<{ fraction: number } & Spread>;
  evaluations: Spread;
  totalSamples: Spread;
  championTestError: Spread | null;
  /** Runs whose champion's test error is below the reference row's of the same seed, of those with both. */
  beatReference: { count: number; of: number };
  /** Mean champion error minus mean reference error, in points, and whether it is below by more than one std of the champion errors. */
  versusReference: { differencePoints: number; belowByMoreThanStd: boolean } | null;
}

export function summarize(task: TaskName, methods: readonly SearchAlgorithmName[], outcomes: readonly RunOutcome[], references: readonly ReferenceOutcome[], fractions: readonly number[]): MethodSummary[] {
  const refError = references.length ? spread(references.map((r) => r.testError)) : null;
  return methods.map((method) => {
    const runs = outcomes.filter((o) => o.task === task && o.method === method);
    const errors = runs.map((r) => r.championTestError).filter((e): e is number => e !== null);
    const paired = runs.flatMap((r) => {
      const ref = references.find((x) => x.seed === r.seed);
      return ref && r.championTestError !== null ? [{ champion: r.championTestError, reference: ref.testError }] : [];
    });
    const champion = errors.length ? spread(errors) : null;
    return {
      task,
      method,
      runs: runs.length,
      bestValAccuracy: runs.length ? fractions.map((fraction, i) => ({ fraction, ...spread(runs.map((r) => r.curve[i]!.bestValAccuracy)) })) : [],
      evaluations: spread(runs.length ? runs.map((r) => r.evaluations) : [0]),
      totalSamples: spread(runs.length ? runs.map((r) => r.searchSamples + r.championSamples) : [0]),
      championTestError: champion,
      beatReference: { count: paired.filter((p) => p.champion < p.reference).length, of: paired.length },
      versusReference:
        champion && refError
          ? { differencePoints: 100 * (champion.mean - refError.mean), belowByMoreThanStd: refError.mean - champion.mean > Math.max(champion.std, refError.std) }
          : null,
    };
  });
}

const pct = (v: number, d = 1) => `${(100 * v).toFixed(d)}`;
const cell = (s: Spread, d = 1) => `${pct(s.mean, d)} ± ${pct(s.std, d)} (${pct(s.min, d)}–${pct(s.max, d)})`;

function table(head: string[], rows: string[][]): string[] {
  const widths = head.map((h, i) => Math.max(h.length, ...rows.map((r) => r[i]!.length)));
  const line = (cells: string[]) => `| ${cells.map((c, i) => c.padEnd(widths[i]!)).join(' | ')} |`;
  return [line(head), `|${widths.map((w) => '-'.repeat(w + 2)).join('|')}|`, ...rows.map(line)];
}

/** The table of one task: best validation accuracy along the search budget, then the champions against the reference row. */
export function taskTable(title: string, budget: number, searchBudget: number, summary: readonly MethodSummary[], references: readonly ReferenceOutcome[], fractions: readonly number[]): string[] {
  const out: string[] = [];
  out.push('', `Task: ${title}.`);
  out.push(`Budget per run: ${budget.toLocaleString('en')} training samples seen in all: ${searchBudget.toLocaleString('en')} for the search, the rest for the champion phase (half each for the final trainings of the search's champion and of the run's reference network).`);
  const searched = summary.filter((s) => s.runs > 0);
  if (searched.length) {
    out.push('Best validation accuracy % after each share of the search budget, mean ± std (min–max) over seeds:', '');
    out.push(...table(['method', ...fractions.map((f) => `${f * 100}%`), 'evals'], searched.map((s) => [s.method, ...s.bestValAccuracy.map((b) => cell(b)), s.evaluations.mean.toFixed(1)])));
  }
  out.push('', 'Test error % (each scored once on the held-out test split), mean ± std (min–max) over seeds:', '');
  const rows = searched.map((s) => [
    `${s.method} champion`,
    s.championTestError ? cell(s.championTestError, 2) : 'none',
    `${Math.round(s.totalSamples.mean).toLocaleString('en')}`,
    `${s.beatReference.count} of ${s.beatReference.of}`,
  ]);
  if (references.length) {
    const r = spread(references.map((x) => x.testError));
    rows.push(['reference network trained once', cell(r, 2), `${Math.round(spread(references.map((x) => x.samples)).mean).toLocaleString('en')}`, '']);
  }
  out.push(...table(['row', 'test error %', 'samples', 'beat the reference (same seed)'], rows));
  return out;
}
