import { mkdtemp, readdir, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { defaultSearchSpace } from '@netbreeder/shared-types';
import { DatasetError, exportChampion, generateKilnCurves, loadChampion, parseRunConfig, predictFile, type RunRecord } from '@netbreeder/coordinator';
import { TestCluster } from './support/harness.js';

/**
 * A whole run on labelled sequences: the invented kiln firing curves (temperature and element
 * power per reading, one firing per sample, classed good / cracked / underfired), real Redis, one
 * real worker process, real training. Until the sequence layers land the search trains
 * flatten → dense networks on the [length, 2] samples. The champion must beat always answering
 * the test split's largest class; its export predicts new firings by firing id.
 */
describe('a run on the invented kiln firing curves (sequences)', () => {
  let dir: string;
  let cluster: TestCluster;
  let run: RunRecord;

  beforeAll(async () => {
    dir = await mkdtemp(join(tmpdir(), 'nb-kiln-curves-'));
    await writeFile(join(dir, 'firings.csv'), generateKilnCurves({ firingsPerOutcome: 40, seed: 11 }));
    const config = parseRunConfig({
      seed: 3,
      dataset: { kind: 'sequences', path: join(dir, 'firings.csv'), idColumn: 'firing', timeColumn: 'minute', channels: ['temp_c', 'power_pct'], labelColumn: 'outcome' },
      split: { validation: 0.2, test: 0.2 },
      search: { algorithm: 'aging-evolution', populationSize: 3, sampleSize: 2, start: 'minimal' },
      budget: { maxEvaluations: 4, maxMinutes: 5 },
      evaluation: { maxSeconds: 30 },
      champion: { epochs: 30, maxSeconds: 60, topK: 1 },
      verification: { championCandidates: false, spotCheckFraction: 0 },
      searchSpace: { ...defaultSearchSpace(), optimizers: ['adam'], epochs: { min: 10, max: 20 }, learningRate: { min: 3e-3, max: 2e-2 }, units: { min: 8, max: 32 }, batchSizes: [16] },
    });
    cluster = await TestCluster.start('kilncurves');
    cluster.spawnWorker('w1');
    await cluster.waitForReadyWorkers(1);
    run = await cluster.coordinator.startRun(config);
    await cluster.runEnd(run.id, 'the kiln curves run to finish', 150_000);
  }, 200_000);

  afterAll(async () => {
    await cluster?.stop();
    if (dir) await rm(dir, { recursive: true, force: true });
  });

  it('finishes with a champion above the majority class on test, and its export predicts new firings by id', async () => {
    const finished = cluster.coordinator.store.getRun(run.id)!;
    expect(finished.state, finished.failure ?? '').toBe('finished');
    expect(finished.dataset.manifest.inputShape).toHaveLength(2);
    expect(finished.dataset.manifest.inputShape[1]).toBe(2);
    const counts = finished.dataset.preparation!.classCounts.test;
    const majority = Math.max(...counts) / counts.reduce((a, b) => a + b, 0);
    const champion = (await (await fetch(`${cluster.coordinator.url}/runs/${run.id}/champion`)).json()) as { test: { accuracy: number } };
    expect(champion.test.accuracy).toBeGreaterThan(majority);

    const out = join(dir, 'export');
    await exportChampion(cluster.coordinator.store, finished, out);
    const preprocessing = JSON.parse(await readFile(join(out, 'preprocessing.json'), 'utf8')) as { steps: { kind: string; length: number } };
    expect(preprocessing.steps.kind).toBe('sequences');
    await writeFile(join(dir, 'new.csv'), generateKilnCurves({ firingsPerOutcome: 5, seed: 99 }));
    const lines: string[] = [];
    const model = await loadChampion(out);
    const outcome = await predictFile(model, join(dir, 'new.csv'), { write: (t) => lines.push(t) });
    expect(outcome.predicted).toBe(15);
    const rows = lines.join('').trim().split('\n');
    expect(rows[0]).toBe('id,predicted_class,probability_cracked,probability_good,probability_underfired');
    expect(rows[1]).toMatch(/^K0001,(good|cracked|underfired),/);
  });
});

describe('bad series input is refused before anything is stored', () => {
  let cluster: TestCluster;
  let dir: string;

  beforeAll(async () => {
    cluster = await TestCluster.start('badseries');
    dir = await mkdtemp(join(tmpdir(), 'nb-badseries-'));
  });

  afterAll(async () => {
    await cluster?.stop();
    await rm(dir, { recursive: true, force: true });
  });

  it('a window longer than the series, a horizon past its end, a word in a channel: no run, no shard', async () => {
    const rows = ['temp,state', ...Array.from({ length: 40 }, (_, t) => `${1000 + t},${t % 4 < 2 ? 'ramp' : 'hold'}`)];
    await writeFile(join(dir, 'series.csv'), `${rows.join('\n')}\n`);
    await writeFile(join(dir, 'word.csv'), `${[...rows.slice(0, 6), '1005,ramp', 'hot,ramp', ...rows.slice(6)].join('\n')}\n`);
    const cases: Array<[Record<string, unknown>, string, RegExp]> = [
      [{ window: 50 }, 'series.csv', /window is 50 steps but the series has only 40/],
      [{ window: 30, task: 'regression', labelColumn: 'temp', horizon: 15 }, 'series.csv', /no window has a target; lower horizon or window/],
      [{ window: 4 }, 'word.csv', /line 8: channel column "temp" holds "hot", not a number/],
    ];
    for (const [extra, file, message] of cases) {
      const config = parseRunConfig({ dataset: { kind: 'series-windows', path: join(dir, file), channels: ['temp'], labelColumn: 'state', ...extra } });
      const err = (await cluster.coordinator.startRun(config).catch((e: unknown) => e)) as DatasetError;
      expect(err).toBeInstanceOf(DatasetError);
      expect(err.message).toMatch(message);
      expect(err.message).toContain(join(dir, file));
    }
    expect(cluster.coordinator.store.listRuns()).toEqual([]);
    expect(await readdir(join(cluster.dataDir, 'datasets')).catch(() => [])).toEqual([]);
  });
});
