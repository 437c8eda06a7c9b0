import { mkdir, mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { PNG } from 'pngjs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { decodeShard, type ModelArtifactsMessage } from '@netbreeder/shared-types';
import { evaluateModel, initBackend, loadModelFromMessage } from '@netbreeder/worker';
import { exportChampion, predictCommand, type RunRecord } from '@netbreeder/coordinator';
import { TestCluster, waitFor } from './support/harness.js';
import { textSink as sink } from './support/text-sink.js';
import { smallRunConfig } from './support/small-run.js';

/**
 * `netbreeder predict` on a folder of tile images, as after the demo: a short demo-tiles run, its
 * export, the test split's tiles written as 16×16 grayscale PNGs (brightness rounded to bytes),
 * then predict. Its classes must equal the coordinator's own scoring (the worker's evaluateModel,
 * which scores every champion) of the same byte-rounded tiles; a damaged file and a tile of the
 * wrong size are named and skipped, the rest predicted, and the exit code is 1.
 */
function grayPng(width: number, height: number, bytes: ArrayLike<number>): Buffer {
  const png = new PNG({ width, height });
  for (let p = 0; p < width * height; p++) {
    png.data[p * 4] = png.data[p * 4 + 1] = png.data[p * 4 + 2] = bytes[p]!;
    png.data[p * 4 + 3] = 255;
  }
  return PNG.sync.write(png);
}

describe('predict on a folder of tile images from a demo-tiles run', () => {
  let cluster: TestCluster;
  let run: RunRecord;
  let exported: string;
  let dir: string;

  beforeAll(async () => {
    dir = await mkdtemp(join(tmpdir(), 'nb-predict-tiles-'));
    cluster = await TestCluster.start('predicttiles');
    cluster.spawnWorker('t1');
    await cluster.waitForReadyWorkers(1);
    run = await cluster.coordinator.startRun(smallRunConfig('predict-tiles', 4, 3));
    run = await waitFor('the tiles run to finish', () => {
      const r = cluster.coordinator.store.getRun(run.id);
      return r && (r.state === 'finished' || r.state === 'failed') ? r : null;
    }, 300_000, 500);
    expect(run.state, run.failure ?? '').toBe('finished');
    exported = await exportChampion(cluster.coordinator.store, run, join(dir, 'champion'));
  }, 360_000);

  afterAll(async () => {
    await cluster?.stop();
    await rm(dir, { recursive: true, force: true });
  });

  it("gives the coordinator's own scoring of the same tiles, naming the files it cannot use", async () => {
    const pre = JSON.parse(await readFile(join(exported, 'preprocessing.json'), 'utf8'));
    expect(pre.steps).toMatchObject({ kind: 'images', width: 16, height: 16, channels: 1, resize: 'none', scale: 'divide-255' });
    const test = decodeShard(await readFile(run.dataset.testPath)).train;
    const size = 16 * 16;
    const rounded = new Float32Array(test.features.length);
    const folder = join(dir, 'tiles');
    await mkdir(join(folder, 'line-2'), { recursive: true });
    const names: string[] = [];
    for (let s = 0; s < test.count; s++) {
      const bytes = Array.from(test.features.subarray(s * size, (s + 1) * size), (v) => Math.round(Math.min(1, Math.max(0, v)) * 255));
      bytes.forEach((b, i) => (rounded[s * size + i] = b / 255));
      // Names sort in sample order; half the tiles in a sub-folder.
      const name = join(s % 2 ? 'line-2' : '.', `tile-${String(s).padStart(4, '0')}.png`).replace(/^\.\//, '');
      names.push(name);
      await writeFile(join(folder, name), grayPng(16, 16, bytes));
    }
    // A PNG cut short, as an interrupted copy leaves it.
    await writeFile(join(folder, 'zz-damaged.png'), grayPng(16, 16, new Array(256).fill(90)).subarray(0, 60));
    await writeFile(join(folder, 'zz-large.png'), grayPng(20, 20, new Array(400).fill(128)));

    const out = sink();
    const err = sink();
    expect(await predictCommand(['--model', exported, '--input', folder], out, err)).toBe(1);
    expect(err.text()).toMatch(/skipped zz-damaged\.png: .*cannot be decoded/);
    expect(err.text()).toMatch(/skipped zz-large\.png: .* is 20×20 pixels but the model was trained on 16×16 images without resizing; resize it to 16×16/);
    const rows = out.text().trim().split('\n').slice(1).map((l) => l.split(','));
    const byId = new Map(rows.map((r) => [r[0]!, r[1]!]));
    expect(byId.size).toBe(test.count);

    // The coordinator's scoring path on the same byte-rounded tiles.
    await initBackend();
    const artifacts = JSON.parse(cluster.coordinator.store.getChampionArtifactsJson(run.id)!) as ModelArtifactsMessage;
    const model = await loadModelFromMessage(artifacts);
    const { predictions } = await evaluateModel(model, { features: rounded, labels: test.labels, count: test.count });
    model.dispose();
    const classNames = run.dataset.manifest.classNames;
    expect(names.map((n) => byId.get(n))).toEqual(Array.from(predictions, (p) => classNames[p]));
  });
});
