import { describe, expect, it } from 'vitest';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { RunStore } from './run-store.js';
import { prefillFinishedEvaluations } from './prefill.js';
import { fixtureGenome, fixtureHash, searchJob, searchResult, storeWithRun } from './test-fixtures.js';

describe('prefillFinishedEvaluations', () => {
  it('adds finished search evaluations with their genomes, search steps and lineage, older than the run\'s own and of its first genome', () => {
    const dir = mkdtempSync(join(tmpdir(), 'nb-prefill-'));
    const path = join(dir, 'store.sqlite');
    try {
      const store = storeWithRun({}, 1000, path);
      store.addEvaluation(searchJob('r1-s0-a1'), 0, 1000, true);
      store.recordResult('r1-s0-a1', searchResult('r1-s0-a1', 'w1', { valAccuracy: 0.05 }), 2000);
      store.close();

      prefillFinishedEvaluations(path, 'r1', 20, 1_000_000);

      const filled = new RunStore(path);
      expect(filled.counts('r1')).toEqual({ queued: 0, running: 0, done: 21, failed: 0 });
      const rows = filled.evaluations('r1').filter((e) => e.id.startsWith('r1-prefill'));
      expect(rows).toHaveLength(20);
      expect(rows.every((e) => e.seq < 0 && e.state === 'done' && (e.finishedAt ?? Infinity) <= 1_000_000 - 1000)).toBe(true);
      const last = filled.getEvaluation('r1-prefill19')!;
      // each its own genome, a copy of the run's first one
      expect(last.genomeHash).not.toBe(fixtureHash);
      expect(filled.getGenome(last.genomeHash)).toMatchObject({ genome: fixtureGenome, params: 67, flops: 100 });
      expect(filled.searchSteps('r1', [last.genomeHash]).map((s) => [s.kind, s.evaluationId])).toEqual([['propose', 'r1-prefill19'], ['observe', 'r1-prefill19']]);
      expect(filled.lineageChain('r1', last.genomeHash).at(-1)).toMatchObject({ evaluationId: 'r1-prefill19', childHash: last.genomeHash, operator: 'prefill' });
      filled.close();
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });
});
