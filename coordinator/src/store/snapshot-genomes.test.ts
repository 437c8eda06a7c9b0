import { describe, expect, it } from 'vitest';
import Database from 'better-sqlite3';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { defaultSearchSpace } from '@netbreeder/shared-types';
import { createSearchAlgorithm } from '../search/index.js';
import { RunStore } from './run-store.js';
import { fixtureManifest, searchJob } from './test-fixtures.js';
import { parseRunConfig } from '../config/run-config.js';

const IMAGE = { inputShape: [16, 16, 1], numClasses: 4 };

describe('search snapshots are stored without their members’ genomes', () => {
  it('reads back, key for key, the snapshot of an algorithm whose members are evaluations of the store; the stored text holds no genome', () => {
    const dir = mkdtempSync(join(tmpdir(), 'nb-snap-'));
    try {
      const path = join(dir, 'store.sqlite');
      const store = new RunStore(path);
      const config = parseRunConfig({ dataset: { kind: 'demo-tiles' }, searchSpace: defaultSearchSpace() });
      store.createRun({ id: 'r1', name: 'test', config, seed: 1, dataset: { manifest: { ...fixtureManifest, inputShape: IMAGE.inputShape, numClasses: 4, classNames: ['a', 'b', 'c', 'd'] }, shardPath: '/x', testPath: '/x' }, now: 1 });
      for (const name of ['aging-evolution', 'pareto-evolution', 'asha-evolution'] as const) {
        const alg = createSearchAlgorithm(name, { populationSize: 5, sampleSize: 3, minEpochs: 1, maxEpochs: 3 }, { space: defaultSearchSpace(), data: IMAGE, seed: 2 });
        store.transaction(() => {
          for (let i = 0; i < 12; i++) {
            const p = alg.propose();
            const id = `r1-${name}-s${i}-a1`;
            store.putGenome({ hash: p.genomeHash, genome: p.genome, params: 1, flops: 1, summary: '' });
            store.addEvaluation(searchJob(id, { genome: p.genome, genomeHash: p.genomeHash }), i, 1, true);
            // The observed genome is the evaluation's, read back from the store (as the run manager does).
            const genome = store.getEvaluation(id)!.job.genome;
            alg.observe({ evaluationId: id, genomeHash: p.genomeHash, genome, fitness: (i * 37) % 11 / 11, budgetEpochs: p.budgetEpochs, params: 10 + i, flops: 100 });
          }
        });
        const snapshot = alg.snapshot();
        store.saveSearchSnapshot('r1', snapshot);
        const stored = (new Database(path, { readonly: true }).prepare('SELECT snapshot_json FROM search_snapshots WHERE run_id = ?').get('r1') as { snapshot_json: string }).snapshot_json;
        expect(stored).not.toContain('"nodes"');
        expect(stored).toContain('"genomeOfEvaluation":true');
        expect(stored.length).toBeLessThan(JSON.stringify(snapshot).length);
        expect(JSON.stringify(store.searchSnapshot('r1'))).toBe(JSON.stringify(snapshot));
      }
      store.close();
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });

  it('refuses a stored state naming an evaluation the store lacks, saying the run cannot resume', () => {
    const store = new RunStore(':memory:');
    const config = parseRunConfig({ dataset: { kind: 'demo-tiles' }, searchSpace: defaultSearchSpace() });
    store.createRun({ id: 'r1', name: 'test', config, seed: 1, dataset: { manifest: fixtureManifest, shardPath: '/x', testPath: '/x' }, now: 1 });
    store.saveSearchSnapshot('r1', { population: [{ evaluationId: 'gone', genomeHash: 'h', genome: { nodes: [] }, fitness: 1 }] });
    expect(() => store.searchSnapshot('r1')).toThrow(/names evaluation gone.*cannot resume/);
  });
});
