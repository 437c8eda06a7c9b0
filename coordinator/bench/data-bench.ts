/**
 * `npm run bench:data`: how long importing the user's own data takes and how much memory it needs.
 * Generates, in a temporary folder, an invented CSV table of 100,000 rows × 50 columns (47 numeric
 * sensor columns, 2 categorical, 1 label) and 20,000 small PNG images (16×16 grayscale, 4 class
 * folders), then imports each through `loadDataset` (read, split, fit, encode, warnings) in its own
 * child process, so the peak resident memory (`maxRSS`) is that import's alone. Prints one line per
 * step and, last, one JSON object with the figures. Bounded: a few minutes on a 2-core PC.
 *
 *   npm run bench:data [-- --rows 100000 --images 20000]
 */
import { spawn } from 'node:child_process';
import { mkdir, mkdtemp, rm, stat, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { parseArgs } from 'node:util';
import { PNG } from 'pngjs';
import { createRandom, type RunConfig } from '@netbreeder/shared-types';
import { sourceNodeArgs } from '@netbreeder/worker';
import { parseRunConfig } from '../src/config/run-config.js';
import { loadDataset } from '../src/importers/index.js';

const here = fileURLToPath(import.meta.url);

interface ImportFigures {
  seconds: number;
  peakRssMb: number;
  baselineRssMb: number;
  train: number;
  inputShape: number[];
  warnings: number;
}

/** Child mode: import one dataset and report. */
async function importOnce(configJson: string): Promise<void> {
  const baseline = process.memoryUsage.rss();
  const config = JSON.parse(configJson) as RunConfig;
  const start = performance.now();
  const { dataset, preparation } = await loadDataset(config);
  const seconds = (performance.now() - start) / 1000;
  const figures: ImportFigures = {
    seconds,
    peakRssMb: process.resourceUsage().maxRSS / 1024,
    baselineRssMb: baseline / 2 ** 20,
    train: dataset.train.count,
    inputShape: dataset.inputShape,
    warnings: preparation.warnings.length,
  };
  process.stdout.write(`${JSON.stringify(figures)}\n`);
}

function runChild(config: RunConfig): Promise<ImportFigures> {
  return new Promise((resolve, reject) => {
    const child = spawn(process.execPath, [...sourceNodeArgs(), here, '--child', JSON.stringify(config)], {
      stdio: ['ignore', 'pipe', 'inherit'],
      env: { ...process.env, NETBREEDER_LOG_LEVEL: 'warn' },
    });
    let out = '';
    child.stdout.on('data', (c: Buffer) => (out += c.toString()));
    child.on('error', reject);
    child.on('exit', (code) => {
      if (code !== 0) return reject(new Error(`import child exited with ${code}`));
      resolve(JSON.parse(out.trim().split('\n').pop()!) as ImportFigures);
    });
  });
}

async function writeCsv(path: string, rows: number): Promise<number> {
  const rng = createRandom('bench-data csv');
  const numeric = 47;
  const header = [...Array.from({ length: numeric }, (_, j) => `sensor_${j}`), 'kiln', 'glaze', 'outcome'];
  const chunks: string[] = [header.join(',')];
  for (let i = 0; i < rows; i++) {
    const label = rng.int(0, 3);
    const cells: string[] = [];
    for (let j = 0; j < numeric; j++) cells.push((rng.normal() + (j < 5 ? label * 0.5 : 0)).toFixed(4));
    cells.push(rng.pick(['north', 'south', 'test']), rng.pick(['celadon', 'shino', 'tenmoku', 'ash', 'raku']), ['sound', 'crazed', 'bloated', 'underfired'][label]!);
    chunks.push(cells.join(','));
  }
  const text = `${chunks.join('\n')}\n`;
  await writeFile(path, text);
  return Buffer.byteLength(text);
}

async function writePngs(folder: string, count: number): Promise<number> {
  const rng = createRandom('bench-data png');
  const classes = ['glossy', 'pinholed', 'crawled', 'crazed'];
  for (const c of classes) await mkdir(join(folder, c), { recursive: true });
  let bytes = 0;
  for (let i = 0; i < count; i++) {
    const png = new PNG({ width: 16, height: 16 });
    for (let p = 0; p < 256; p++) {
      const v = Math.round(255 * Math.min(1, Math.max(0, 0.5 + 0.15 * rng.normal() + ((i % 4) * (p % 16)) / 120)));
      png.data.set([v, v, v, 255], p * 4);
    }
    const file = PNG.sync.write(png);
    bytes += file.length;
    await writeFile(join(folder, classes[i % 4]!, `img-${String(i).padStart(5, '0')}.png`), file);
  }
  return bytes;
}

async function main(): Promise<void> {
  const { values } = parseArgs({ options: { child: { type: 'string' }, rows: { type: 'string', default: '100000' }, images: { type: 'string', default: '20000' } } });
  if (values.child) return importOnce(values.child);
  const rows = Number(values.rows);
  const images = Number(values.images);
  const dir = await mkdtemp(join(tmpdir(), 'nb-bench-data-'));
  try {
    let t = performance.now();
    const csvBytes = await writeCsv(join(dir, 'table.csv'), rows);
    process.stdout.write(`generated ${rows} × 50 CSV (${(csvBytes / 2 ** 20).toFixed(1)} MiB) in ${((performance.now() - t) / 1000).toFixed(1)} s\n`);
    t = performance.now();
    const pngBytes = await writePngs(join(dir, 'images'), images);
    process.stdout.write(`generated ${images} PNG files of 16×16 (${(pngBytes / 2 ** 20).toFixed(1)} MiB) in ${((performance.now() - t) / 1000).toFixed(1)} s\n`);

    const csv = await runChild(parseRunConfig({ dataset: { kind: 'csv', path: join(dir, 'table.csv'), labelColumn: 'outcome' } }));
    process.stdout.write(`CSV import: ${csv.seconds.toFixed(2)} s, peak RSS ${csv.peakRssMb.toFixed(0)} MiB (baseline ${csv.baselineRssMb.toFixed(0)}), input [${csv.inputShape.join(', ')}]\n`);
    const png = await runChild(parseRunConfig({ dataset: { kind: 'image-folder', path: join(dir, 'images') } }));
    process.stdout.write(`PNG folder import: ${png.seconds.toFixed(2)} s, peak RSS ${png.peakRssMb.toFixed(0)} MiB (baseline ${png.baselineRssMb.toFixed(0)}), input [${png.inputShape.join(', ')}]\n`);
    const csvStat = await stat(join(dir, 'table.csv'));
    process.stdout.write(
      `${JSON.stringify({
        bench: 'data-import',
        csv: {
          rows,
          columns: 50,
          fileMb: Number((csvStat.size / 2 ** 20).toFixed(1)),
          seconds: Number(csv.seconds.toFixed(2)),
          rowsPerSecond: Math.round(rows / csv.seconds),
          peakRssMb: Math.round(csv.peakRssMb),
          baselineRssMb: Math.round(csv.baselineRssMb),
          features: csv.inputShape[0],
        },
        png: { images, size: '16x16', seconds: Number(png.seconds.toFixed(2)), imagesPerSecond: Math.round(images / png.seconds), peakRssMb: Math.round(png.peakRssMb), baselineRssMb: Math.round(png.baselineRssMb) },
        node: process.version,
      })}\n`,
    );
  } finally {
    await rm(dir, { recursive: true, force: true });
  }
}

await main();
