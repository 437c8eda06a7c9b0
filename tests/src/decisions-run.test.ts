import { mkdir, readFile } from 'node:fs/promises';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { Writable } from 'node:stream';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import * as tf from '@tensorflow/tfjs';
import { decodeShard, frontResponseValidator, searchStepValidator, type FrontResponse } from '@netbreeder/shared-types';
import { accuracyOf, averagePredictions, downloadChampion, howItWasFound, parseRunConfig, pickCommand, replayCommand, replayRun, requestEnsembleAndWait, type RunRecord } from '@netbreeder/coordinator';
import { initBackend } from '@netbreeder/worker';
import { chromium } from 'playwright-core';
import { TestCluster, waitFor } from './support/harness.js';
import { smallRunConfig } from './support/small-run.js';

/**
 * A real multi-objective run (pareto-evolution, accuracy against parameters) with two worker
 * processes: its decision log replays exactly from the store, the front route answers from the
 * store, the user picks the champion from the front while the run is paused, and an averaging
 * ensemble of two is retrained, exported and scored on the test split. Screenshot:
 * test-artifacts/dashboard-front.png.
 */
const EVALUATIONS = 10;
const ARTIFACTS = join(dirname(fileURLToPath(import.meta.url)), '..', '..', 'test-artifacts');

/** Collects what a command writes. */
const sink = () => {
  const chunks: string[] = [];
  const stream = new Writable({ write: (chunk, _enc, done) => (chunks.push(String(chunk)), done()) });
  return { stream, text: () => chunks.join('') };
};

describe('a multi-objective run: decisions, replay, front, pick, ensemble', () => {
  let cluster: TestCluster;
  let run: RunRecord;
  let front: FrontResponse;
  let picked: string;
  const bearer = () => ({ authorization: `Bearer ${cluster.coordinator.secrets.adminToken}` });
  const admin = () => ({ ...bearer(), 'content-type': 'application/json' });

  /**
   * Reads an exported ensemble, checks each member's own test score and the averaged score
   * against the exported models (recomputed here), and returns its manifest.
   */
  async function rescoredEnsemble(out: string) {
    const manifest = JSON.parse(await readFile(join(out, 'ensemble', 'ensemble.json'), 'utf8')) as {
      members: Array<{ model: string; genomeHash: string; testAccuracy: number }>;
      test: { accuracy: number };
    };
    expect(new Set(manifest.members.map((m) => m.genomeHash)).size).toBe(manifest.members.length);
    // Averaging the exported members' outputs here gives the test score the coordinator reported.
    await initBackend();
    const test = decodeShard(await readFile(run.dataset.testPath)).train;
    const x = tf.tensor(test.features, [test.count, ...run.dataset.manifest.inputShape]);
    const probabilities: Float32Array[] = [];
    for (const m of manifest.members) {
      const modelJson = JSON.parse(await readFile(join(out, 'ensemble', m.model), 'utf8'));
      const weights = await readFile(join(out, 'ensemble', modelJson.weightsManifest[0].paths[0]));
      const model = await tf.loadLayersModel({
        load: async () => ({ modelTopology: modelJson.modelTopology, weightSpecs: modelJson.weightsManifest[0].weights, weightData: weights.buffer.slice(weights.byteOffset, weights.byteOffset + weights.byteLength) }),
      });
      const p = model.predict(x) as tf.Tensor;
      probabilities.push(p.dataSync() as Float32Array);
      // each member's own score, recomputed from its exported model
      expect(accuracyOf(Array.from(p.argMax(-1).dataSync()), test.labels)).toBeCloseTo(m.testAccuracy, 10);
      p.dispose();
      model.dispose();
    }
    x.dispose();
    const { predictions } = averagePredictions(probabilities, run.dataset.manifest.numClasses);
    expect(accuracyOf(predictions, test.labels)).toBeCloseTo(manifest.test.accuracy, 10);
    return manifest;
  }

  beforeAll(async () => {
    cluster = await TestCluster.start('decisions');
    cluster.spawnWorker('d1');
    cluster.spawnWorker('d2');
    await cluster.waitForReadyWorkers(2);
    const base = smallRunConfig('decisions', EVALUATIONS, 11);
    const config = parseRunConfig({
      ...base,
      // Minimal first members train in a moment, so the ten evaluations reach children of the
      // population (every decision kind), which slower hand-made first members may not.
      search: { algorithm: 'pareto-evolution', populationSize: 4, sampleSize: 2, objective: 'params', start: 'minimal' },
      champion: { epochs: 5, maxSeconds: 60, topK: 1, ensemble: { size: 2, diversityPenalty: 0.05 } },
    });
    run = await cluster.coordinator.startRun(config);
  });

  afterAll(async () => {
    await cluster?.stop();
  });

  it('serves the accuracy-against-parameters front from the store while the run is paused', async () => {
    const store = cluster.coordinator.store;
    await waitFor('four results', () => store.counts(run.id).done >= 4, 180_000, 250);
    const url = cluster.coordinator.url;
    expect((await fetch(`${url}/runs/${run.id}/pause`, { method: 'POST', headers: bearer() })).status).toBe(200);
    front = frontResponseValidator.parse(await (await fetch(`${url}/runs/${run.id}/front`)).json());
    const done = store.evaluations(run.id).filter((e) => e.kind === 'search' && e.state === 'done');
    expect(front).toMatchObject({ runId: run.id, objective: 'params', multiObjective: true, runObjective: 'params' });
    expect(front.points.map((p) => p.evaluationId).sort()).toEqual(done.map((e) => e.id).sort());
    // The front is exactly the non-dominated points: none of its points is beaten on both by any point,
    // and every point off it is.
    const beats = (a: (typeof front.points)[0], b: (typeof front.points)[0]) => a.valAccuracy >= b.valAccuracy && a.cost <= b.cost && (a.valAccuracy > b.valAccuracy || a.cost < b.cost);
    for (const p of front.points) expect(front.points.some((q) => beats(q, p))).toBe(!p.onFront);
    expect(front.front.length).toBe(front.points.filter((p) => p.onFront).length);
    // the cost is the genome's parameter count in the store
    for (const p of front.points) expect(p.cost).toBe(store.getGenome(p.genomeHash)!.params);
    const flops = frontResponseValidator.parse(await (await fetch(`${url}/runs/${run.id}/front?objective=flops`)).json());
    expect(flops.objective).toBe('flops');
    // Real workers measure each trained genome's single-sample latency; the latency front uses it.
    const latency = frontResponseValidator.parse(await (await fetch(`${url}/runs/${run.id}/front?objective=latency`)).json());
    expect(latency.withoutCost).toBe(0);
    for (const p of latency.points) expect(p.cost).toBe(store.getEvaluation(p.evaluationId)!.result!.latencyMsPerSample);
    expect(latency.points.every((p) => p.cost > 0)).toBe(true);
    expect((await fetch(`${url}/runs/${run.id}/front?objective=weight`)).status).toBe(400);
  });

  it('takes a pick from the front and refuses picks that are not finished results of the run', async () => {
    const url = cluster.coordinator.url;
    const pickUrl = `${url}/runs/${run.id}/champion/pick`;
    // the cheapest genome of the front: unlikely to be the most accurate, so the pick shows
    picked = front.points.find((p) => p.evaluationId === front.front[0])!.genomeHash;
    const refused = async (body: unknown, headers: Record<string, string> = admin()) => {
      const res = await fetch(pickUrl, { method: 'POST', headers, body: JSON.stringify(body) });
      return { status: res.status, code: ((await res.json()) as { error: { code: string } }).error.code };
    };
    expect(await refused({ genomeHash: 'f'.repeat(64) })).toEqual({ status: 400, code: 'NB_NOT_A_RESULT' });
    expect(await refused({ genomeHash: 'not a hash' })).toEqual({ status: 400, code: 'NB_BAD_REQUEST' });
    expect(await refused({ genomeHash: picked }, { 'content-type': 'application/json' })).toEqual({ status: 401, code: 'NB_UNAUTHORIZED' });
    expect(cluster.coordinator.store.events(run.id, 'champion-picked')).toEqual([]); // a refused pick changes nothing
    // A genome that breaks the search space is refused, and the refusal is in the decision log.
    const bad = await fetch(`${url}/runs/${run.id}/genomes`, { method: 'POST', headers: admin(), body: JSON.stringify({ genome: { schemaVersion: 1, nodes: [], output: 'nowhere', training: { optimizer: 'adam', learningRate: 0.01, batchSize: 32, weightDecay: 0, epochs: 3 } } }) });
    expect(bad.status).toBe(400);
    const refusal = cluster.coordinator.store.searchSteps(run.id).filter((s) => s.kind === 'reject');
    expect(refusal).toHaveLength(1);
    expect(refusal[0]!.decisions[0]).toMatchObject({ kind: 'rejected', subject: 'genome', evaluationId: null });

    const out = sink();
    const code = await pickCommand([run.id, picked, '--coordinator', url, '--admin-token', cluster.coordinator.secrets.adminToken], out.stream);
    expect(code).toBe(0);
    expect(out.text()).toContain(picked.slice(0, 12));
    expect(out.text()).toMatch(/, validation \d+\.\d{2}%\) will be the champion/);
    expect(cluster.coordinator.store.events(run.id, 'champion-picked')).toHaveLength(1);
    expect((await fetch(`${url}/runs/${run.id}/resume`, { method: 'POST', headers: bearer() })).status).toBe(200);
  });

  it('finishes with the picked champion and an averaging ensemble scored on the test split', async () => {
    const store = cluster.coordinator.store;
    await waitFor('the run to finish', () => ['finished', 'failed'].includes(store.getRun(run.id)!.state), 240_000, 250).catch((err: Error) => {
      throw new Error(`${err.message}\nworker logs:\n${cluster.workerLogs.slice(-30).join('')}`);
    });
    expect(store.getRun(run.id)!.state, store.getRun(run.id)!.failure ?? '').toBe('finished');
    expect(store.getChampion(run.id)!.genomeHash).toBe(picked);
    // a pick is the champion alone: no other genome competed for it
    const scored = store.events(run.id, 'champion-candidate-scored').map((e) => e.detail as { genomeHash: string; champion: boolean });
    expect(scored.filter((s) => s.champion).map((s) => s.genomeHash)).toEqual([picked]);

    const out = join(cluster.dataDir, 'exported');
    await downloadChampion(cluster.coordinator.url, run.id, out, cluster.coordinator.secrets.adminToken);
    const report = await readFile(join(out, 'report.md'), 'utf8');
    expect(report).toContain('Picked by the user');
    expect(report).toContain('## How it was found');
    expect(report).toContain('## Averaging ensemble');
    const html = await readFile(join(out, 'report.html'), 'utf8');
    expect(html).toContain('Picked by the user');

    const manifest = await rescoredEnsemble(out);
    expect(manifest.members).toHaveLength(2);
  });

  it('after the run finished, a new pick is trained as the new champion and exported again', async () => {
    const store = cluster.coordinator.store;
    const url = cluster.coordinator.url;
    const finalFront = frontResponseValidator.parse(await (await fetch(`${url}/runs/${run.id}/front`)).json());
    // another genome: the front's most accurate if it differs from the first pick, else the best off the front
    const other = [...finalFront.front].reverse().map((id) => finalFront.points.find((p) => p.evaluationId === id)!).find((p) => p.genomeHash !== picked)
      ?? finalFront.points.filter((p) => p.genomeHash !== picked).sort((a, b) => b.valAccuracy - a.valAccuracy)[0]!;
    const res = await fetch(`${url}/runs/${run.id}/champion/pick`, { method: 'POST', headers: admin(), body: JSON.stringify({ genomeHash: other.genomeHash }) });
    expect(res.status).toBe(200);
    expect(((await res.json()) as { retraining: boolean }).retraining).toBe(true);
    await waitFor('the run to finish again', () => store.getRun(run.id)!.state === 'finished' && store.getChampion(run.id)!.genomeHash === other.genomeHash, 120_000, 250);
    const summary = (await (await fetch(`${url}/runs/${run.id}/champion`)).json()) as { genomeHash: string; candidates: Array<{ genomeHash: string }>; choice: { by: string; genomeHash: string } };
    expect(summary.choice).toMatchObject({ by: 'pick', genomeHash: other.genomeHash });
    expect(summary.candidates.map((c) => c.genomeHash)).toEqual([other.genomeHash]); // this round only
    const out = join(cluster.dataDir, 'exported-again');
    await downloadChampion(url, run.id, out, cluster.coordinator.secrets.adminToken);
    expect(JSON.parse(await readFile(join(out, 'champion.json'), 'utf8')).genomeHash).toBe(other.genomeHash);
    expect(await readFile(join(out, 'report.md'), 'utf8')).toContain(`Picked by the user: genome \`${other.genomeHash.slice(0, 12)}\``);
  });

  it('exports a new ensemble of three asked of the finished run, the champion unchanged', async () => {
    const store = cluster.coordinator.store;
    const champion = store.getChampion(run.id)!.genomeHash;
    const url = cluster.coordinator.url;
    const answer = await requestEnsembleAndWait(url, run.id, { size: 3, diversityPenalty: 0.1 }, cluster.coordinator.secrets.adminToken, undefined, 250);
    expect(answer.round).toBe(2); // 0: the run's end, 1: the pick after it
    expect(answer.members).toHaveLength(3);
    expect(store.getChampion(run.id)!.genomeHash).toBe(champion);
    const out = join(cluster.dataDir, 'exported-ensemble');
    await downloadChampion(url, run.id, out, cluster.coordinator.secrets.adminToken);
    const manifest = await rescoredEnsemble(out);
    expect(manifest.members.map((m) => m.genomeHash)).toEqual(answer.members.map((m) => m.genomeHash));
    // refused while it is not finished, and for a run that does not exist
    const nope = await fetch(`${url}/runs/nope/ensemble`, { method: 'POST', headers: admin(), body: JSON.stringify({ size: 2 }) });
    expect(nope.status, await nope.text()).toBe(404);
    expect((await fetch(`${url}/runs/${run.id}/ensemble`, { method: 'POST', headers: admin(), body: JSON.stringify({ size: 1 }) })).status).toBe(400);
  });

  it('the dashboard highlights the front in headless chromium', async () => {
    const browser = await chromium.launch({ executablePath: '/usr/bin/chromium', args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-background-networking', '--no-first-run'] });
    try {
      const page = await browser.newPage({ viewport: { width: 1280, height: 900 } });
      const errors: string[] = [];
      page.on('pageerror', (e) => errors.push(e.message));
      await page.goto(`${cluster.coordinator.url}/?every=1`);
      const finalFront = frontResponseValidator.parse(await (await fetch(`${cluster.coordinator.url}/runs/${run.id}/front`)).json());
      /** Points of the scatter's front dataset, and how many of them Chart.js placed inside the plot. */
      const drawnFront = () =>
        page.evaluate(() => {
          type Chart = { data: { datasets: Array<{ data: Array<{ genomeHash: string }> }> }; chartArea: { left: number; right: number; top: number; bottom: number }; getDatasetMeta(i: number): { data: Array<{ x: number; y: number }> } };
          const chart = (globalThis as unknown as { netbreederDashboard: { charts: { scatter: Chart } } }).netbreederDashboard.charts.scatter;
          const a = chart.chartArea;
          const inside = chart.getDatasetMeta(2).data.filter((el) => el.x >= a.left - 1 && el.x <= a.right + 1 && el.y >= a.top - 1 && el.y <= a.bottom + 1).length;
          return { hashes: chart.data.datasets[2]!.data.map((p) => p.genomeHash), inside };
        });
      const shown = await waitFor('the front to be drawn', async () => {
        const d = await drawnFront();
        return d.hashes.length === finalFront.front.length ? d : null;
      }, 30_000);
      const expected = finalFront.front.map((id) => finalFront.points.find((p) => p.evaluationId === id)!.genomeHash);
      expect(shown.hashes).toEqual(expected);
      expect(shown.inside).toBe(expected.length);
      expect(await page.textContent('#front-hint')).toContain(`${finalFront.front.length} of ${finalFront.points.length}`);
      expect(errors).toEqual([]);
      await mkdir(ARTIFACTS, { recursive: true });
      await page.screenshot({ path: join(ARTIFACTS, 'dashboard-front.png'), fullPage: true });
    } finally {
      await browser.close();
    }
  });

  it('recorded every search decision with its reason, and replays exactly from the store', async () => {
    const store = cluster.coordinator.store;
    const steps = store.searchSteps(run.id);
    for (const s of steps) expect(searchStepValidator.issues(s)).toEqual([]);
    const search = store.evaluations(run.id).filter((e) => e.kind === 'search');
    // one propose step per proposal, one observe step per recorded result
    expect(steps.filter((s) => s.kind === 'propose').map((s) => s.evaluationId).sort()).toEqual(search.filter((e) => e.attempt === 1).map((e) => e.id).sort());
    expect(steps.filter((s) => s.kind === 'observe').map((s) => s.evaluationId).sort()).toEqual(search.filter((e) => e.state === 'done').map((e) => e.id).sort());
    const kinds = new Set(steps.flatMap((s) => s.decisions.map((d) => d.kind)));
    for (const k of ['random-genome', 'parent-selected', 'mutation', 'member-added', 'member-removed'] as const) expect(kinds.has(k), k).toBe(true);

    // A child's line in plain words, from the recorded tournament and mutation.
    const child = steps.find((s) => s.kind === 'propose' && s.parentHashes.length === 1)!;
    const told = howItWasFound(store, run.id, child.genomeHash!);
    expect(told.at(-1)!.lines.join(' ')).toMatch(/^Its parent was chosen by drawing 2 of the \d+ living members at random .*; the best of them by front, then by how little crowded it was, `[0-9a-f]{12}` \(\d+\.\d%\), won\. The child was made by [a-z-]+: /);
    expect(told[0]!.lines[0]).toMatch(/^As one of the first members of the population, it began as the minimal network/);

    const report = replayRun(store, run.id);
    expect(report.disagreement).toBeNull();
    expect(report).toMatchObject({ agree: true, proposals: EVALUATIONS, observations: search.filter((e) => e.state === 'done').length, skipped: 1 });

    const out = sink();
    expect(await replayCommand([run.id, '--data-dir', cluster.dataDir], out.stream)).toBe(0);
    expect(out.text()).toMatch(/^agree: run /);
  });
});
