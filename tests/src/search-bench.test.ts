import { spawn } from 'node:child_process';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { sourceNodeArgs } from '@netbreeder/worker';
import { budgetCurve, countedWithin, spread } from '../../coordinator/bench/search-bench-budget.js';

const root = join(import.meta.dirname, '..', '..');

describe('the budget rule of bench:search', () => {
  const evals = [
    { evaluationId: 'a', samples: 100, valAccuracy: 0.5 },
    { evaluationId: 'b', samples: 300, valAccuracy: 0.4 },
    { evaluationId: 'c', samples: 100, valAccuracy: 0.9 },
  ];

  it('counts every evaluation that started below the limit, so the overshoot is at most one evaluation', () => {
    expect(countedWithin(evals, 100).map((e) => e.evaluationId)).toEqual(['a']);
    expect(countedWithin(evals, 101).map((e) => e.evaluationId)).toEqual(['a', 'b']);
    expect(countedWithin(evals, 400).map((e) => e.evaluationId)).toEqual(['a', 'b']);
    expect(countedWithin(evals, 10_000)).toHaveLength(3);
  });

  it('gives the best validation accuracy and the spend at each fraction', () => {
    expect(budgetCurve(evals, 500, [0.2, 0.5, 1])).toEqual([
      { fraction: 0.2, bestValAccuracy: 0.5, spent: 100, evaluations: 1 },
      { fraction: 0.5, bestValAccuracy: 0.5, spent: 400, evaluations: 2 },
      { fraction: 1, bestValAccuracy: 0.9, spent: 500, evaluations: 3 },
    ]);
  });

  it('spreads with the sample standard deviation', () => {
    // 2, 4, 4, 4, 5, 5, 7, 9: mean 5, sample variance 32/7 (worked by hand).
    const s = spread([2, 4, 4, 4, 5, 5, 7, 9]);
    expect(s.mean).toBe(5);
    expect(s.std).toBeCloseTo(Math.sqrt(32 / 7), 12);
    expect([s.min, s.max, s.n]).toEqual([2, 9, 8]);
  });
});

/** Runs `npm run bench:search -- --quick` as its own process and returns its last stdout line and its stderr. */
function runQuickBench(): Promise<{ code: number | null; json: string; stderr: string }> {
  return new Promise((resolve) => {
    const child = spawn(process.execPath, [...sourceNodeArgs(), join(root, 'coordinator/bench/search-bench.ts'), '--quick'], { cwd: root, stdio: ['ignore', 'pipe', 'pipe'] });
    let out = '';
    let err = '';
    child.stdout.on('data', (c: Buffer) => (out += c.toString()));
    child.stderr.on('data', (c: Buffer) => (err += c.toString()));
    child.once('exit', (code) => resolve({ code, json: out.trim().split('\n').at(-1) ?? '', stderr: err }));
  });
}

describe('bench:search --quick (the demo tiles, real coordinator and workers)', () => {
  it('prints one JSON line whose runs each spent the search budget within one evaluation and kept the champion phase (champion and reference final trainings) within the rest', async () => {
    const { code, json, stderr } = await runQuickBench();
    expect(code, stderr).toBe(0);
    const result = JSON.parse(json) as {
      bench: string;
      unit: string;
      seeds: number;
      championShare: number;
      defaultMethod: string;
      tasks: Record<
        string,
        {
          budget: number;
          searchBudget: number;
          methods: Record<string, { bestValAccuracy: Array<{ fraction: number; mean: number; std: number; min: number; max: number }>; championTestError: { mean: number } | null; beatReference: { count: number; of: number } }>;
          referenceRow: Array<{ seed: number; testError: number; bestEpoch: number; epochs: number; samples: number }>;
        }
      >;
      runs: Array<{
        task: string;
        method: string;
        state: string;
        searchSamples: number;
        championSamples: number;
        evaluations: number;
        largestEvaluation: number;
        recordedAfterBudget: number;
        discardedAtFinish: number;
        curve: Array<{ fraction: number; bestValAccuracy: number; spent: number }>;
        championTestError: number | null;
        championWithinBudget: boolean | null;
        championIsReference: boolean | null;
        heldBackSides: { search: { heldBackAccuracy: number | null; testError: number | null }; reference: { heldBackAccuracy: number | null; testError: number | null } } | null;
      }>;
    };
    expect(result.bench).toBe('search');
    expect(result.unit).toBe('training samples seen');
    expect(Object.keys(result.tasks)).toEqual(['tiles']);
    const task = result.tasks.tiles!;
    expect(task.searchBudget).toBe(Math.round(task.budget * (1 - result.championShare)));
    expect(Object.keys(task.methods)).toEqual([result.defaultMethod, 'random']);
    for (const m of Object.values(task.methods)) {
      expect(m.bestValAccuracy.map((p) => p.fraction)).toEqual([0.1, 0.25, 0.5, 0.75, 1]);
      for (const p of m.bestValAccuracy) expect(p.min <= p.mean && p.mean <= p.max && p.std >= 0).toBe(true);
      expect(m.championTestError).not.toBeNull();
      expect(m.beatReference.of).toBe(1);
    }
    // The reference row: one training per seed with the whole budget, its best epoch kept.
    expect(task.referenceRow).toHaveLength(1);
    const ref = task.referenceRow[0]!;
    expect(ref.samples).toBe(task.budget);
    expect(ref.bestEpoch >= 1 && ref.bestEpoch <= ref.epochs).toBe(true);
    expect(ref.testError > 0 && ref.testError < 1).toBe(true);
    expect(result.runs).toHaveLength(2);
    for (const r of result.runs) {
      expect(r.state).toBe('finished');
      // Reached the search budget, and passed it by less than one evaluation (the one that crossed it).
      expect(r.searchSamples).toBeGreaterThanOrEqual(task.searchBudget);
      expect(r.searchSamples - task.searchBudget).toBeLessThan(r.largestEvaluation);
      // The champion phase's final trainings (the champion's and the reference network's) stayed within the rest of the budget.
      expect(r.championSamples).toBeGreaterThan(0);
      expect(r.championSamples).toBeLessThanOrEqual(task.budget - task.searchBudget);
      // The finish gives up what was in flight, so nothing past the budget is recorded.
      expect(r.recordedAfterBudget).toBe(0);
      expect(r.championWithinBudget).toBe(true);
      const best = r.curve.map((p) => p.bestValAccuracy);
      expect(best).toEqual([...best].sort((a, b) => a - b)); // best-so-far never falls
      expect(r.curve.at(-1)!.spent).toBe(r.searchSamples);
      expect(r.championTestError! > 0 && r.championTestError! < 1).toBe(true);
      // The check's diagnostic: the exported side's test error is the champion's, and the reference network is exported exactly when it scored higher on the held-back samples (the search's choice on a tie).
      if (r.heldBackSides) {
        const { search, reference } = r.heldBackSides;
        const exported = r.championIsReference ? reference : search;
        expect(exported.testError).toBeCloseTo(r.championTestError!, 12);
        expect(r.championIsReference).toBe(reference.heldBackAccuracy! > search.heldBackAccuracy!);
      }
    }
  }, 300_000);
});
