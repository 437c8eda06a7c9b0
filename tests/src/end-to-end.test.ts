import { readFile } from 'node:fs/promises';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import * as tf from '@tensorflow/tfjs';
import { decodeShard, statusResponseValidator, type StatusResponse } from '@netbreeder/shared-types';
import { CHAMPION_FILES, downloadChampion, type RunRecord } from '@netbreeder/coordinator';
import { initBackend } from '@netbreeder/worker';
import { TestCluster, waitFor } from './support/harness.js';
import { smallRunConfig } from './support/small-run.js';

/**
 * The whole job on one machine: a real coordinator, two real worker processes training real (tiny)
 * TensorFlow.js models through a real Redis queue, then the champion's final training, its score on
 * the held-out test split, and its export, reloaded with tf.loadLayersModel.
 */
const EVALUATIONS = 10;

describe('a run end to end with two workers', () => {
  let cluster: TestCluster;
  let run: RunRecord;
  let sawRunningStatus: StatusResponse | null = null;

  beforeAll(async () => {
    cluster = await TestCluster.start('e2e');
    const config = smallRunConfig('e2e', EVALUATIONS);
    cluster.spawnWorker('w1');
    cluster.spawnWorker('w2');
    await cluster.waitForReadyWorkers(2);
    run = await cluster.coordinator.startRun(config);
    try {
      await waitFor(
        'the run to finish',
        async () => {
          const status = statusResponseValidator.parse(await (await fetch(`${cluster.coordinator.url}/status`)).json());
          if (!sawRunningStatus && status.workers.filter((w) => w.alive).length === 2 && status.evaluations.done > 0 && status.run?.state === 'searching') sawRunningStatus = status;
          return status.run?.state === 'finished' || status.run?.state === 'failed' ? status : null;
        },
        240_000,
        500,
      );
    } catch (err) {
      throw new Error(`${(err as Error).message}\nworker logs:\n${cluster.workerLogs.slice(-40).join('')}`);
    }
  });

  afterAll(async () => {
    await cluster?.stop();
  });

  it('records every planned evaluation exactly once', () => {
    const store = cluster.coordinator.store;
    const finalRun = store.getRun(run.id)!;
    expect(finalRun.state, finalRun.failure ?? '').toBe('finished');
    const search = store.evaluations(run.id).filter((e) => e.kind === 'search');
    const done = search.filter((e) => e.state === 'done');
    expect(finalRun.proposals).toBe(EVALUATIONS);
    // one successful attempt per proposal, no proposal left without a result
    expect(new Set(done.map((e) => e.seq)).size).toBe(done.length);
    expect(done.length + search.filter((e) => e.state === 'failed' && !search.some((o) => o.seq === e.seq && o.attempt > e.attempt)).length).toBe(EVALUATIONS);
    expect(store.counts(run.id).queued + store.counts(run.id).running).toBe(0);
    for (const e of done) {
      expect(e.result!.valAccuracy).toBeGreaterThanOrEqual(0);
      expect(e.result!.valAccuracy).toBeLessThanOrEqual(1);
      expect(e.result!.evaluationId).toBe(e.id);
    }
    // both workers trained something
    expect(new Set(done.map((e) => e.result!.workerId))).toEqual(new Set(['w1', 'w2']));
    expect(store.events(null, 'rejected-result')).toEqual([]);
  });

  it('showed progress on GET /status while searching', () => {
    expect(sawRunningStatus, 'a status with two live workers during the search').not.toBeNull();
    const s = sawRunningStatus!;
    expect(s.run!.id).toBe(run.id);
    expect(s.best).not.toBeNull();
    expect(s.throughput.perMinuteSinceStart).toBeGreaterThan(0);
    for (const w of s.workers) {
      expect(['wasm', 'tensorflow', 'cpu']).toContain(w.backend);
      expect(w.secondsSinceHeartbeat).toBeLessThan(20);
    }
  });

  it('serves the champion and exports a model that reloads with the same predictions', async () => {
    const res = await fetch(`${cluster.coordinator.url}/runs/${run.id}/champion`);
    expect(res.status).toBe(200);
    const champion = (await res.json()) as { test: { accuracy: number; samples: number }; genome: unknown; paramCount: number; files: string[] };
    expect(champion.files).toEqual([...CHAMPION_FILES]);
    // Ten evaluations from minimal networks do not guarantee a good model (the demo shows what a
    // few minutes of search reach); what this checks is that the score is the real one.
    expect(champion.test.samples).toBe(decodeShard(await readFile(run.dataset.testPath)).train.count);

    const out = join(cluster.dataDir, 'exported');
    await downloadChampion(cluster.coordinator.url, run.id, out, cluster.coordinator.secrets.adminToken);
    const modelJson = JSON.parse(await readFile(join(out, 'model.json'), 'utf8'));
    const weights = await readFile(join(out, 'weights.bin'));
    await initBackend();
    const model = await tf.loadLayersModel({
      load: async () => ({
        modelTopology: modelJson.modelTopology,
        weightSpecs: modelJson.weightsManifest[0].weights,
        weightData: weights.buffer.slice(weights.byteOffset, weights.byteOffset + weights.byteLength),
      }),
    });
    expect(model.countParams()).toBe(champion.paramCount);
    const test = decodeShard(await readFile(run.dataset.testPath)).train;
    const x = tf.tensor(test.features, [test.count, ...run.dataset.manifest.inputShape]);
    const predicted = Array.from((model.predict(x) as tf.Tensor).argMax(-1).dataSync());
    x.dispose();
    const stored = cluster.coordinator.store.getChampion(run.id)!;
    // Changed with issue 20 (the test split no longer chooses among candidates): the champion is the
    // best genome by validation evidence, and only it and the reference network got a final training.
    const store = cluster.coordinator.store;
    const scored = store.events(run.id, 'champion-candidate-scored').map((e) => e.detail as { testAccuracy: number; genomeHash: string; champion: boolean });
    const referenceHash = (store.events(run.id, 'reference-network')[0]!.detail as { genomeHash: string }).genomeHash;
    expect(store.evaluations(run.id, 'search')[0]!.genomeHash).toBe(referenceHash); // the run's first evaluation
    expect(new Set(scored.map((c) => c.genomeHash))).toEqual(new Set([stored.genomeHash, referenceHash]));
    expect(scored.filter((c) => c.champion).map((c) => c.genomeHash)).toEqual([stored.genomeHash]);
    // Each genome's evidence: the mean validation accuracy of its results at its largest budget.
    const byGenome = new Map<string, Array<{ acc: number; epochs: number }>>();
    for (const e of store.evaluations(run.id, 'search').filter((x) => x.state === 'done')) byGenome.set(e.genomeHash, [...(byGenome.get(e.genomeHash) ?? []), { acc: e.valAccuracy!, epochs: e.job.budget.epochs }]);
    const evidence = [...byGenome.values()].map((rows) => {
      const top = rows.filter((r) => r.epochs === Math.max(...rows.map((x) => x.epochs)));
      return top.reduce((a, r) => a + r.acc, 0) / top.length;
    });
    expect(stored.valAccuracy).toBeCloseTo(Math.max(...evidence), 12);
    const status = (await (await fetch(`${cluster.coordinator.url}/status`)).json()) as StatusResponse;
    expect(status.reference).toMatchObject({ state: 'scored', referenceGenomeHash: referenceHash, championTestAccuracy: stored.testAccuracy });
    expect(status.reference!.line).toMatch(/reference network/);
    expect(predicted).toEqual(stored.testPredictions);
    // The same export's model.onnx in ONNX Runtime (onnxruntime-node, the reference runtime of the
    // open ONNX standard): the same classes, probabilities within 1e-4 of TensorFlow.js's.
    const ort = await import('onnxruntime-node');
    const session = await ort.InferenceSession.create(join(out, 'model.onnx'));
    const onnx = (await session.run({ input: new ort.Tensor('float32', test.features, [test.count, ...run.dataset.manifest.inputShape]) }))['output']!.data as Float32Array;
    await session.release();
    const classes = run.dataset.manifest.numClasses;
    const tfProbabilities = tf.tidy(() => (model.predict(tf.tensor(test.features, [test.count, ...run.dataset.manifest.inputShape])) as tf.Tensor).dataSync());
    onnx.forEach((v, i) => expect(Math.abs(v - tfProbabilities[i]!)).toBeLessThan(1e-4));
    const onnxClasses = Array.from({ length: test.count }, (_, s) => {
      const row = Array.from(onnx.subarray(s * classes, (s + 1) * classes));
      return row.indexOf(Math.max(...row));
    });
    expect(onnxClasses).toEqual(stored.testPredictions);
    const accuracy = predicted.filter((p, i) => p === test.labels[i]).length / test.count;
    expect(accuracy).toBe(champion.test.accuracy);
    const html = await readFile(join(out, 'report.html'), 'utf8');
    // the architecture diagram has one box per layer, plus input and head
    expect(html.match(/<g class="layer">/g)?.length).toBe((champion.genome as { nodes: unknown[] }).nodes.length + 2);
    expect(html).toContain('confusion matrix');
    const report = await readFile(join(out, 'report.md'), 'utf8');
    expect(report).toContain('held-out test accuracy');
    expect(report).toContain(status.reference!.line.slice(1));
    expect(report).toContain('confusion matrix');
    // the confusion matrix accounts for every test sample, its diagonal for the correct ones
    const saved = JSON.parse(await readFile(join(out, 'champion.json'), 'utf8')) as { test: { confusion: number[][] } };
    expect(saved.test.confusion.flat().reduce((a, b) => a + b, 0)).toBe(test.count);
    expect(saved.test.confusion.reduce((a, row, i) => a + row[i]!, 0)).toBe(predicted.filter((p, i) => p === test.labels[i]).length);
  });
});
