import { mkdtemp, readdir, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { createRequire } from 'node:module';
import { existsSync } from 'node:fs';
import { chromium } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { concatSamples, decodeShard, defaultSearchSpace, regressionMetrics, type EvaluationsResponse, type LineageResponse, type StatusResponse, type TopGenomesResponse } from '@netbreeder/shared-types';
import { championFiles, championSummary, ensembleFiles, exportChampion, loadChampion, loadDataset, parseRunConfig, predictCommand, readRunConfigFile, runSummary, type RunRecord } from '@netbreeder/coordinator';
import { textSink as sink } from './support/text-sink.js';
import { TestCluster, waitFor } from './support/harness.js';
import { fitLeastSquares } from './support/least-squares.js';

/**
 * A whole regression run against the outside: the Auto MPG table (miles per gallon from engine and
 * weight figures; UCI repository, Quinlan 1993) as the `vega-datasets` npm package ships it
 * (`data/cars.json`, 406 rows; the 14 with a missing MPG or horsepower are dropped, leaving the
 * usual 392). Real Redis, one real worker process, real training. Checks:
 * - the champion's test RMSE is under half the RMSE of always predicting the training mean
 *   (a wide margin; common practice: Auto MPG's MPG is largely explained by weight and year);
 * - it is within 25% of ordinary least squares fitted in closed form, here, on the same train +
 *   validation rows and scored on the same test rows (a closed-form reference; tolerance: common
 *   practice, a small network on this table lands near or below linear regression).
 */
const require = createRequire(import.meta.url);
interface Car { Miles_per_Gallon: number | null; Cylinders: number; Displacement: number; Horsepower: number | null; Weight_in_lbs: number; Acceleration: number; Year: string; Origin: string }

describe('a regression run on the Auto MPG table', () => {
  let dir: string;
  let cluster: TestCluster;
  let run: RunRecord;
  let config: ReturnType<typeof parseRunConfig>;

  beforeAll(async () => {
    dir = await mkdtemp(join(tmpdir(), 'nb-mpg-'));
    // The package exports only its script; its data folder sits beside the build folder.
    const cars = JSON.parse(await readFile(join(dirname(require.resolve('vega-datasets')), '..', 'data', 'cars.json'), 'utf8')) as Car[];
    const cell = (v: number | null) => (v === null ? 'NA' : String(v));
    const lines = ['mpg,cylinders,displacement,horsepower,weight,acceleration,year,origin', ...cars.map((c) => [cell(c.Miles_per_Gallon), c.Cylinders, c.Displacement, cell(c.Horsepower), c.Weight_in_lbs, c.Acceleration, Number(c.Year.slice(0, 4)), c.Origin].join(','))];
    await writeFile(join(dir, 'auto-mpg.csv'), `${lines.join('\n')}\n`);
    // A space for a small table: Adam, enough epochs, small batches, modest widths.
    const space = { ...defaultSearchSpace(), optimizers: ['adam' as const], epochs: { min: 40, max: 80 }, learningRate: { min: 3e-3, max: 2e-2 }, units: { min: 8, max: 64 }, batchSizes: [16, 32] };
    config = parseRunConfig({
      seed: 5,
      dataset: { kind: 'csv', path: join(dir, 'auto-mpg.csv'), labelColumn: 'mpg', task: 'regression', missing: 'drop-row' },
      search: { algorithm: 'aging-evolution', populationSize: 4, sampleSize: 2 },
      budget: { maxEvaluations: 8, maxMinutes: 10 },
      evaluation: { maxSeconds: 60 },
      champion: { epochs: 100, maxSeconds: 120, topK: 2, ensemble: { size: 2 } },
      verification: { championCandidates: false, spotCheckFraction: 0 },
      searchSpace: space,
    });
    cluster = await TestCluster.start('mpg');
    cluster.spawnWorker('w1');
    await cluster.waitForReadyWorkers(1);
    run = await cluster.coordinator.startRun(config);
    await cluster.runEnd(run.id, 'the Auto MPG run to finish', 400_000);
  }, 460_000);

  afterAll(async () => {
    await cluster?.stop();
    if (dir) await rm(dir, { recursive: true, force: true });
  });

  it('finishes with a champion whose test RMSE beats predicting the training mean widely and comes near least squares', async () => {
    const finished = cluster.coordinator.store.getRun(run.id)!;
    expect(finished.state, finished.failure ?? '').toBe('finished');
    const res = await fetch(`${cluster.coordinator.url}/runs/${run.id}/champion`);
    const champion = (await res.json()) as { target: { column: string }; test: { samples: number; regression: { rmse: number; mae: number; r2: number; baselineRmse: number } } };
    expect(champion.target.column).toBe('mpg');
    const t = champion.test.regression;
    expect(t.rmse).toBeLessThan(0.5 * t.baselineRmse);
    expect(t.r2).toBeGreaterThan(0.7);

    // Least squares on the very same split (the import is deterministic: same file, same seed).
    const { dataset } = await loadDataset(config);
    expect(dataset.test.count).toBe(champion.test.samples);
    const width = dataset.inputShape[0]!;
    const fitRows = concatSamples(dataset.train, dataset.val);
    const predict = fitLeastSquares(fitRows.features, fitRows.targets!, fitRows.count, width);
    const predicted = Array.from({ length: dataset.test.count }, (_, i) => predict(dataset.test.features.subarray(i * width, (i + 1) * width)));
    const ols = regressionMetrics(dataset.test.targets!, predicted).rmse * dataset.target!.std;
    expect(t.rmse).toBeLessThan(1.25 * ols);
  });

  it('shows errors in miles per gallon, not accuracies, in /status and the report', async () => {
    const status = (await (await fetch(`${cluster.coordinator.url}/status`)).json()) as StatusResponse;
    expect(status.run?.target).toBe('mpg');
    expect(status.best?.valRegression?.rmse).toBeGreaterThan(0);
    expect(status.champion?.testRegression?.baselineRmse).toBeGreaterThan(status.champion!.testRegression!.rmse);
    expect(status.reference?.line).toMatch(/RMSE/);
    // No RMSE-derived value is called an accuracy: the fitness goes by its own name.
    expect(status.best?.valAccuracy).toBeUndefined();
    expect(status.best?.valFitness).toBeGreaterThan(0);
    expect(status.champion?.testAccuracy).toBeUndefined();
    expect(status.champion?.valAccuracy).toBeUndefined();
    expect(status.champion?.testFitness).toBeGreaterThan(0);
    const summary = runSummary(cluster.coordinator, run.id, status)!;
    expect(summary).toMatch(/test: +RMSE [0-9.]+ \(mpg\)/);
    expect(summary).toMatch(/baseline: +RMSE [0-9.]+ always predicting the training mean/);
    expect(summary).not.toMatch(/\d\.\d%/);
    // The dashboard's routes carry validation RMSE in miles per gallon for its charts, table and lineage.
    const get = async <T>(path: string) => (await (await fetch(`${cluster.coordinator.url}${path}`)).json()) as T;
    const points = (await get<EvaluationsResponse>(`/runs/${run.id}/evaluations`)).evaluations.filter((p) => p.state === 'done');
    expect(points.length).toBeGreaterThan(0);
    expect(points.every((p) => p.valRmse! > 0)).toBe(true);
    expect(Math.min(...points.map((p) => p.valRmse!))).toBeCloseTo(status.best!.valRegression!.rmse, 6);
    const top = await get<TopGenomesResponse>(`/runs/${run.id}/top?limit=3`);
    expect(top.genomes[0]!.valRmse).toBeCloseTo(status.best!.valRegression!.rmse, 6);
    const lineage = await get<LineageResponse>(`/runs/${run.id}/lineage/${status.best!.genomeHash}`);
    // Read back from the fitness, 1 / (1 + RMSE / std): the same RMSE to float precision.
    expect(lineage.steps.at(-1)?.child.valRmse ?? lineage.ancestor.valRmse).toBeCloseTo(status.best!.valRegression!.rmse, 3);
    const metrics = await (await fetch(`${cluster.coordinator.url}/metrics`)).text();
    expect(metrics).toMatch(new RegExp(`^netbreeder_best_validation_rmse\\{run="${run.id}"\\} [0-9.]+$`, 'm'));
    expect(metrics).not.toMatch(/^netbreeder_best_validation_accuracy\{/m);
    expect(metrics).toMatch(new RegExp(`^netbreeder_best_validation_mae\\{run="${run.id}"\\} [0-9.]+$`, 'm'));
    expect(metrics).toMatch(new RegExp(`^netbreeder_best_validation_r2\\{run="${run.id}"\\} -?[0-9.]+$`, 'm'));
    const report = championFiles(cluster.coordinator.store, cluster.coordinator.store.getRun(run.id)!)!.get('report.md')!.toString();
    const exported = championSummary(cluster.coordinator.store, cluster.coordinator.store.getRun(run.id)!)!;
    expect(exported.test.accuracy).toBeUndefined();
    expect(exported.test.fitness).toBeGreaterThan(0);
    expect(exported.validation.accuracy).toBeUndefined();
    expect(report).toContain('held-out test RMSE (mpg)');
    expect(report).toContain('always predicting the training mean');
    expect(report).not.toMatch(/accuracy|\d\.\d+%/);
    const html = championFiles(cluster.coordinator.store, cluster.coordinator.store.getRun(run.id)!)!.get('report.html')!.toString();
    expect(html).toContain('Held-out test RMSE');
    // Predicted against actual: one dot per test row; the residual histogram beside it.
    expect(html.match(/<circle /g)?.length).toBe(cluster.coordinator.store.getChampion(run.id)!.testPredictions.length);
    expect(html).toContain('aria-label="residual histogram"');
    // Every chart reads off: a title on each axis, tick values (in miles per gallon on the scatter).
    for (const title of ['actual mpg', 'predicted mpg', 'rows', 'epoch', 'training loss']) expect(html).toMatch(new RegExp(`class="axis-title[^"]*">${title}`));
    const ticks = [...html.matchAll(/class="tick[^"]*">([^<]+)<\/text>/g)].map((m) => Number(m[1]));
    expect(ticks.length).toBeGreaterThanOrEqual(12);
    expect(ticks.every(Number.isFinite)).toBe(true);
    expect(ticks).toContain(20); // the MPG range, about 9 to 47, steps by 10 (common knowledge of the table's range)
    expect(html).not.toMatch(/accuracy|\d\.\d+%/);
    // champion.json (and GET /runs/:id/champion, the same document) has no key or text that says accuracy, at any depth.
    const championJson = championFiles(cluster.coordinator.store, cluster.coordinator.store.getRun(run.id)!)!.get('champion.json')!.toString();
    expect(championJson.match(/.{0,60}accuracy.{0,40}/i)?.[0]).toBeUndefined();
    expect(championJson).toContain('"valFitness"');
    const served = await (await fetch(`${cluster.coordinator.url}/runs/${run.id}/champion`)).text();
    expect(JSON.parse(served)).toEqual(JSON.parse(championJson));
  });

  it('draws the dashboard in miles per gallon: RMSE tiles, axes and table, the best-so-far line falling (headless chromium)', async () => {
    const CHROMIUM = '/usr/bin/chromium';
    if (!existsSync(CHROMIUM)) throw new Error(`no browser at ${CHROMIUM}: install Debian's chromium (apt-get install chromium); .ci/run does this`);
    const browser = await chromium.launch({ executablePath: CHROMIUM, args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-background-networking', '--disable-component-update', '--no-first-run'] });
    try {
      const page = await browser.newPage();
      const errors: string[] = [];
      page.on('pageerror', (e) => errors.push(e.message));
      await page.goto(`${cluster.coordinator.url}/?every=1`);
      type Dash = { netbreederDashboard: { state: { polls: number }; charts: Record<string, { options: { scales: { y: { title: { text: string } } } }; data: { datasets: Array<{ data: Array<{ y: number }> }> } }> } };
      await waitFor('the dashboard to poll twice', async () => ((await page.evaluate(() => (globalThis as unknown as Dash).netbreederDashboard.state.polls)) >= 2 ? true : null), 20_000, 200);
      const seen = {
        ...(await page.evaluate(() => {
          const { charts } = (globalThis as unknown as Dash).netbreederDashboard;
          return {
            yTitles: ['bestTime', 'bestCount', 'scatter'].map((c) => charts[c]!.options.scales.y.title.text),
            best: charts.bestCount!.data.datasets[0]!.data.map((p) => p.y),
            dots: charts.scatter!.data.datasets[0]!.data.map((p) => p.y),
          };
        })),
        tiles: await Promise.all(['#tile-best', '#tile-champion', '#tile-champion-note'].map((sel) => page.textContent(sel))),
        header: await page.textContent('#top-score'),
        cells: await page.$$eval('#top-table tbody td:nth-child(3)', (tds) => tds.map((td) => (td as unknown as { textContent: string }).textContent)),
        page: (await page.textContent('main')) ?? '',
      };
      expect(errors).toEqual([]);
      expect(seen.yTitles.every((t) => t.startsWith('validation RMSE'))).toBe(true);
      expect(seen.tiles[0]).toMatch(/^RMSE [0-9.]+$/);
      expect(seen.tiles[1]).toMatch(/^RMSE [0-9.]+$/);
      expect(seen.tiles[2]).toMatch(/predicting the mean: RMSE [0-9.]+/);
      expect(seen.header).toBe('val. RMSE');
      expect(seen.cells.length).toBeGreaterThan(0);
      expect(seen.cells.every((c) => /^RMSE [0-9.]+$/.test(c ?? ''))).toBe(true);
      // RMSE in miles per gallon, lower is better: the best so far never rises and ends at the lowest dot.
      expect(seen.dots.length).toBeGreaterThan(0);
      expect(seen.best.at(-1)).toBeCloseTo(Math.min(...seen.dots), 9);
      expect(seen.best.every((v, i) => i === 0 || v <= seen.best[i - 1]!)).toBe(true);
      // (Percentages remain where they are shares, such as the spot-checked fraction of results.)
      expect(seen.page.match(/.{0,60}accura.{0,40}/i)?.[0]).toBeUndefined();
    } finally {
      await browser.close();
    }
  });

  it("predicts in miles per gallon from the export: the loader, the predict command and model.onnx in ONNX Runtime give the coordinator's test predictions", async () => {
    const exported = await exportChampion(cluster.coordinator.store, run, join(dir, 'champion'));
    const pre = JSON.parse(await readFile(join(exported, 'preprocessing.json'), 'utf8')) as { target: { column: string; mean: number; std: number } };
    expect(pre.target).toEqual(run.dataset.manifest.target);
    const test = decodeShard(await readFile(run.dataset.testPath)).train;
    const recorded = cluster.coordinator.store.getChampion(run.id)!.testPredictions;
    const loaded = await loadChampion(exported);
    const values = loaded.predictNumbers(test.features, test.count);
    loaded.dispose();
    values.forEach((v, i) => expect(Math.abs(v - recorded[i]!)).toBeLessThan(1e-4));
    // ONNX Runtime (onnxruntime-node, the open standard's reference runtime) on the same prepared rows.
    const ort = await import('onnxruntime-node');
    const session = await ort.InferenceSession.create(join(exported, 'model.onnx'));
    const onnx = (await session.run({ input: new ort.Tensor('float32', test.features, [test.count, ...run.dataset.manifest.inputShape]) }))['output']!.data as Float32Array;
    await session.release();
    onnx.forEach((v, i) => expect(Math.abs(v * pre.target.std + pre.target.mean - recorded[i]!)).toBeLessThan(1e-3));
    // The predict command on the raw table (the label column is ignored, a missing horsepower becomes the training mean).
    const out = sink();
    expect(await predictCommand(['--model', exported, '--input', join(dir, 'auto-mpg.csv')], out, sink())).toBe(0);
    const lines = out.text().trim().split('\n');
    expect(lines[0]).toBe('id,predicted_mpg');
    expect(lines.length - 1).toBe(406);
    expect(lines.slice(1).every((l) => Number.isFinite(Number(l.split(',')[1])))).toBe(true);
  });

  it('averages the predicted numbers of an ensemble and scores it like the champion', async () => {
    const scored = cluster.coordinator.store.events(run.id, 'ensemble-scored').at(-1)?.detail as { testRegression: { rmse: number; baselineRmse: number }; members: unknown[]; averaging: string };
    expect(scored.members.length).toBe(2);
    expect(scored.averaging).toContain('predicted numbers');
    expect(scored.testRegression.rmse).toBeLessThan(0.5 * scored.testRegression.baselineRmse);
    const manifest = JSON.parse(ensembleFiles(cluster.coordinator.store, cluster.coordinator.store.getRun(run.id)!)!.get('ensemble.json')!.toString()) as { how: string; test: { regression?: unknown; accuracy?: unknown } };
    expect(manifest.how).toContain('as mpg');
    expect(manifest.test.accuracy).toBeUndefined();
    // No key or text of ensemble.json says accuracy: the members' and the champion's scores are fitnesses, the rule speaks of RMSE.
    const text = ensembleFiles(cluster.coordinator.store, cluster.coordinator.store.getRun(run.id)!)!.get('ensemble.json')!.toString();
    expect(text.match(/.{0,60}accuracy.{0,40}/i)?.[0]).toBeUndefined();
    const named = JSON.parse(text) as { selection: { rule: string }; champion: { testFitness: number }; members: Array<{ validationFitness: number; testFitness: number }> };
    expect(named.selection.rule).toContain('lowest validation RMSE');
    expect(named.champion.testFitness).toBeGreaterThan(0);
    expect(named.members.every((m) => m.validationFitness > 0 && m.testFitness > 0)).toBe(true);
  });
});

describe('regression tables that cannot be used are refused, and nothing is stored', () => {
  let cluster: TestCluster;
  let dir: string;

  beforeAll(async () => {
    cluster = await TestCluster.start('badregression');
    dir = await mkdtemp(join(tmpdir(), 'nb-badregression-'));
  });

  afterAll(async () => {
    await cluster?.stop();
    await rm(dir, { recursive: true, force: true });
  });

  it('starts no run and writes no shard for each', async () => {
    // An invented piece log: wall thickness, peak temperature, shrinkage in percent.
    const rows = (shrink: (i: number) => string) => ['wall_mm,peak_c,shrink_pct', ...Array.from({ length: 60 }, (_, i) => `${4 + (i % 9)},${1180 + i},${shrink(i)}`)].join('\n');
    const cases: Array<[string, string, Record<string, unknown>, string, RegExp]> = [
      ['untasked.csv', rows((i) => (8 + i * 0.071).toFixed(3)), {}, 'NB_DATASET_NUMERIC_LABEL', /60 distinct numbers: to predict the number, set "task": "regression"/],
      ['flat.csv', rows(() => '9.5'), { task: 'regression' }, 'NB_DATASET_CONSTANT_TARGET', /nothing to learn/],
      ['gap.csv', rows((i) => (i === 7 ? '' : (8 + i * 0.07).toFixed(2))), { task: 'regression' }, 'NB_DATASET_MISSING_VALUE', /line 9: .* never filled/],
      ['word.csv', rows((i) => (i === 3 ? 'cracked' : (8 + i * 0.07).toFixed(2))), { task: 'regression' }, 'NB_DATASET_NOT_A_NUMBER', /line 5: .*"cracked", not a number/],
    ];
    for (const [name, text, extra, code, message] of cases) {
      await writeFile(join(dir, name), text);
      const err = (await cluster.coordinator.startRun(parseRunConfig({ dataset: { kind: 'csv', path: join(dir, name), labelColumn: 'shrink_pct', ...extra } })).catch((e: unknown) => e)) as Error & { code?: string };
      expect(err.code, name).toBe(code);
      expect(err.message, name).toMatch(message);
    }
    expect(cluster.coordinator.store.listRuns()).toEqual([]);
    expect(await readdir(join(cluster.dataDir, 'datasets')).catch(() => [])).toEqual([]);
  });
});

describe('a regression run on the invented kiln-shrinkage example', () => {
  let cluster: TestCluster;
  let run: RunRecord;

  beforeAll(async () => {
    const file = join(import.meta.dirname, '..', '..', 'examples', 'kiln-shrinkage-run.json');
    const config = await readRunConfigFile(file);
    cluster = await TestCluster.start('shrinkage');
    cluster.spawnWorker('w1');
    await cluster.waitForReadyWorkers(1);
    // The example's run file with a budget a test can afford.
    run = await cluster.coordinator.startRun(
      parseRunConfig({
        ...config,
        budget: { maxEvaluations: 6, maxMinutes: 10 },
        search: { algorithm: 'aging-evolution', populationSize: 3, sampleSize: 2 },
        champion: { epochs: 60, maxSeconds: 120, topK: 1 },
        verification: { championCandidates: false, spotCheckFraction: 0 },
        searchSpace: { ...defaultSearchSpace(), optimizers: ['adam'], epochs: { min: 20, max: 40 }, learningRate: { min: 3e-3, max: 2e-2 }, units: { min: 8, max: 64 }, batchSizes: [16, 32] },
      }),
    );
    await waitFor('the kiln-shrinkage run to finish', () => {
      const r = cluster.coordinator.store.getRun(run.id);
      return r && (r.state === 'finished' || r.state === 'failed') ? r : null;
    }, 400_000, 500);
  }, 460_000);

  afterAll(async () => {
    await cluster?.stop();
  });

  it('finishes with a champion whose test RMSE beats always predicting the training mean', () => {
    const finished = cluster.coordinator.store.getRun(run.id)!;
    expect(finished.state, finished.failure ?? '').toBe('finished');
    const champion = championSummary(cluster.coordinator.store, finished)!;
    expect(champion.target?.column).toBe('shrinkage_pct');
    // The invented shrinkage follows the clay body, the peak, the hold, the water and the wall: far from constant.
    expect(champion.test.regression!.rmse).toBeLessThan(0.5 * champion.test.regression!.baselineRmse);
  });
});
