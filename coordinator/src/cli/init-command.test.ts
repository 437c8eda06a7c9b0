import { existsSync } from 'node:fs';
import { mkdir, mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { PassThrough } from 'node:stream';
import { PNG } from 'pngjs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createRandom } from '@netbreeder/shared-types';
import { readRunConfigFile } from '../config/run-config.js';
import { createLogger } from '../logger.js';
import { prepareRun } from '../run/prepare-run.js';
import { defaultRunFilePath, initCommand } from './init-command.js';

const repoSchema = resolve(import.meta.dirname, '..', '..', '..', 'run-file.schema.json');
let dir: string;

/** Runs `netbreeder init` with these arguments and returns what it printed. */
async function init(argv: string[]): Promise<string> {
  const out = new PassThrough();
  let text = '';
  out.on('data', (chunk: Buffer) => (text += chunk.toString()));
  expect(await initCommand(argv, out)).toBe(0);
  return text;
}

/** The run file at `path` through the coordinator's own checks: the schema, then the data read, split and encoded. */
async function checkedAsRunWould(path: string) {
  return prepareRun(await readRunConfigFile(path), createLogger('test', 'error'));
}

/** An invented kiln log: an id, two categories, measurements with a few gaps, and the firing's outcome. */
function kilnLog(rows: number): string {
  const r = createRandom(5);
  const lines = ['firing_no,kiln,clay,peak_c,hold_min,humidity_pct,outcome'];
  for (let i = 0; i < rows; i++) {
    const peak = r.uniform(1000, 1300);
    const outcome = peak < 1100 ? 'underfired' : peak > 1250 ? 'bloated' : 'sound';
    lines.push(`K${100 + i},${r.pick(['north', 'south'])},${r.pick(['stoneware', 'porcelain'])},${peak.toFixed(0)},${r.int(0, 30)},${i % 9 === 4 ? '' : r.uniform(30, 60).toFixed(0)},${outcome}`);
  }
  return `${lines.join('\n')}\n`;
}

/** A 20×20 gray tile crop: plain, or with a dark diagonal crack. */
function tilePng(crack: boolean, seed: number): Buffer {
  const r = createRandom(seed);
  const png = new PNG({ width: 20, height: 20 });
  for (let y = 0; y < 20; y++) {
    for (let x = 0; x < 20; x++) {
      const v = Math.max(0, Math.min(255, Math.round((crack && Math.abs(x - y) < 2 ? 60 : 200) + r.normal() * 10)));
      png.data.set([v, v, v, 255], (y * 20 + x) * 4);
    }
  }
  return PNG.sync.write(png);
}

beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'nb-init-'));
  await writeFile(join(dir, 'kiln.csv'), kilnLog(90));
  for (const [name, crack] of [['plain', false], ['cracked', true]] as const) {
    await mkdir(join(dir, 'tiles', name), { recursive: true });
    for (let i = 0; i < 6; i++) await writeFile(join(dir, 'tiles', name, `tile-${i}.png`), tilePng(crack, i + (crack ? 100 : 0)));
  }
});
afterAll(() => rm(dir, { recursive: true, force: true }));

describe('netbreeder init', () => {
  it('writes a run file for a CSV table beside it, says what it guessed and why, and the run file passes the coordinator\'s checks', async () => {
    const printed = await init([join(dir, 'kiln.csv')]);
    const runFile = join(dir, 'kiln-run.json');
    expect(defaultRunFilePath(join(dir, 'kiln.csv'))).toBe(runFile);
    expect(printed).toContain('label column: outcome, because its name says');
    expect(printed).toContain('task: classification');
    expect(printed).toMatch(/firing_no\s+ignored\s+its name says it identifies the row/);
    expect(printed).toMatch(/kiln\s+categorical/);
    expect(printed).toMatch(/humidity_pct\s+numeric\s+every cell is a number; 10 missing/);
    expect(printed).toContain('budget: ');
    const json = JSON.parse(await readFile(runFile, 'utf8')) as Record<string, unknown>;
    // Outside the repository the schema is named by its absolute path; it is the repository's own.
    expect(json.$schema).toBe(repoSchema);
    expect(json.dataset).toEqual({ kind: 'csv', path: 'kiln.csv', labelColumn: 'outcome', task: 'classification', delimiter: ',', ignoreColumns: ['firing_no'], categoricalColumns: ['kiln', 'clay'], missing: 'fill' });
    const prepared = await checkedAsRunWould(runFile);
    expect(prepared.loaded.dataset.classNames).toEqual(['bloated', 'sound', 'underfired']);
    expect(prepared.config.budget.maxEvaluations).toBeGreaterThanOrEqual(60);
  });

  it('keeps an existing run file unless --force', async () => {
    const runFile = join(dir, 'kiln-run.json');
    await writeFile(runFile, '{"mine": true}\n');
    await expect(initCommand([join(dir, 'kiln.csv')], new PassThrough())).rejects.toThrow(/exists; init keeps it: pass --force/);
    expect(await readFile(runFile, 'utf8')).toBe('{"mine": true}\n');
    await init([join(dir, 'kiln.csv'), '--force', '--label', 'kiln']);
    expect(JSON.parse(await readFile(runFile, 'utf8'))).toMatchObject({ dataset: { labelColumn: 'kiln' } });
  });

  it('writes a run file for an image folder with the images\' size and channels, which passes the coordinator\'s checks', async () => {
    const out = join(dir, 'elsewhere', 'tiles-run.json');
    await mkdir(join(dir, 'elsewhere'));
    const printed = await init([join(dir, 'tiles'), '--out', out]);
    expect(printed).toContain('found 12 images in 2 class folders (cracked 6, plain 6)');
    expect(printed).toContain('channels: 1, because the 2 images looked at are all gray');
    expect(JSON.parse(await readFile(out, 'utf8'))).toMatchObject({ dataset: { kind: 'image-folder', path: '../tiles', imageSize: { width: 20, height: 20 }, channels: 1 } });
    const prepared = await checkedAsRunWould(out);
    expect(prepared.loaded.dataset.inputShape).toEqual([20, 20, 1]);
  });

  it('writes nothing when the data cannot make a run, and says why', async () => {
    await writeFile(join(dir, 'one-class.csv'), 'peak_c,outcome\n1200,sound\n1210,sound\n1190,sound\n');
    await expect(initCommand([join(dir, 'one-class.csv'), '--label', 'outcome'], new PassThrough())).rejects.toThrow(/at least 2/);
    expect(existsSync(join(dir, 'one-class-run.json'))).toBe(false);
    await expect(initCommand([join(dir, 'missing.csv')], new PassThrough())).rejects.toThrow(/cannot read .*missing\.csv/);
  });
});
