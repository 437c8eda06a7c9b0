/**
 * Writes the invented example data the example run files point at, from a fixed seed:
 *
 *   data/kiln-firings.csv        a pottery workshop's kiln log: one firing per row, outcome as label
 *   data/kiln-shrinkage.csv      the same workshop's piece log: one fired piece per row, its shrinkage in % as the target
 *   data/glaze-crops/<class>/    16×16 PNG crops of glazed surfaces: glossy, pinholed, crawled
 *   data/shelf-heat-*-ubyte      IDX files of 8×8 thermal maps of a kiln shelf: even, hot-front, hot-back
 *   data/kiln-curves.csv         kiln temperature curves, one firing per sample (long format): good, cracked, underfired
 *
 * Nothing here is real data. Run from the repository root: `npx tsx --conditions=source examples/make-example-data.ts`.
 */
import { mkdir, rm, writeFile } from 'node:fs/promises';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { PNG } from 'pngjs';
import { createRandom, type Random } from '@netbreeder/shared-types';
import { generateKilnCurves } from '@netbreeder/coordinator';

const out = join(dirname(fileURLToPath(import.meta.url)), 'data');
const rng = createRandom('netbreeder example data v1');
const clamp = (v: number, lo: number, hi: number): number => Math.min(hi, Math.max(lo, v));

/** Firings: the outcome follows from peak temperature against the clay body's range, hold time and cooling rate. */
function kilnCsv(r: Random, rows: number): string {
  const bodies = { earthenware: [1000, 1120], stoneware: [1200, 1290], porcelain: [1240, 1320] } as const;
  const lines = ['firing_id,kiln,clay_body,peak_c,ramp_c_per_h,hold_min,cooling_c_per_h,humidity_pct,outcome'];
  for (let i = 0; i < rows; i++) {
    const kiln = r.pick(['north', 'south', 'test-kiln']);
    const body = r.pick(Object.keys(bodies) as Array<keyof typeof bodies>);
    const [lo, hi] = bodies[body];
    const peak = Math.round(r.uniform(lo - 70, hi + 70) + (kiln === 'south' ? 15 : 0));
    const ramp = Math.round(r.uniform(60, 220));
    const hold = Math.round(r.uniform(0, 40));
    const cooling = Math.round(r.uniform(40, 260));
    const humidity = r.chance(0.05) ? 'NA' : String(Math.round(r.uniform(25, 70)));
    const heat = peak + hold * 0.8;
    const outcome = heat < lo ? 'underfired' : heat > hi + 25 ? 'bloated' : cooling > 200 && r.chance(0.85) ? 'crazed' : 'sound';
    lines.push(`F${String(i + 1).padStart(4, '0')},${kiln},${body},${peak},${ramp},${hold},${cooling},${humidity},${outcome}`);
  }
  return `${lines.join('\n')}\n`;
}

/**
 * Fired pieces: shrinkage (wet to fired size, %) grows with the clay body's base shrinkage, how far
 * the peak goes past the body's range start, the hold, the throwing water and thin walls; invented.
 */
function shrinkageCsv(r: Random, rows: number): string {
  const bodies = { earthenware: [5.5, 1000], stoneware: [10.5, 1200], porcelain: [13, 1240] } as const;
  const lines = ['piece_id,kiln,clay_body,wall_mm,water_pct,peak_c,hold_min,ramp_c_per_h,shrinkage_pct'];
  for (let i = 0; i < rows; i++) {
    const kiln = r.pick(['north', 'south', 'test-kiln']);
    const body = r.pick(Object.keys(bodies) as Array<keyof typeof bodies>);
    const [base, start] = bodies[body];
    const wall = r.uniform(3, 12);
    const water = r.uniform(18, 28);
    const peak = Math.round(r.uniform(start - 20, start + 110) + (kiln === 'south' ? 10 : 0));
    const hold = Math.round(r.uniform(0, 40));
    const ramp = Math.round(r.uniform(60, 220));
    const vitrified = Math.max(0, peak - start) / 100;
    const shrink = base + 2.2 * vitrified * vitrified + 0.03 * hold + 0.18 * (water - 23) - 0.08 * (wall - 7) + 0.25 * r.normal();
    const rampCell = r.chance(0.03) ? 'NA' : String(ramp);
    lines.push(`P${String(i + 1).padStart(4, '0')},${kiln},${body},${wall.toFixed(1)},${water.toFixed(1)},${peak},${hold},${rampCell},${shrink.toFixed(2)}`);
  }
  return `${lines.join('\n')}\n`;
}

/** A 16×16 glaze crop: a glossy tinted surface with a highlight, plus pinholes (dark dots) or crawling (bare patches). */
function glazeCrop(r: Random, kind: 'glossy' | 'pinholed' | 'crawled'): Buffer {
  const n = 16;
  const png = new PNG({ width: n, height: n });
  const tint = [r.uniform(0.5, 0.9), r.uniform(0.5, 0.9), r.uniform(0.4, 0.8)];
  const hx = r.uniform(3, 13);
  const hy = r.uniform(3, 13);
  const holes = kind === 'pinholed' ? Array.from({ length: r.int(3, 6) }, () => [r.uniform(1, 15), r.uniform(1, 15)]) : [];
  const patch = kind === 'crawled' ? [r.uniform(3, 13), r.uniform(3, 13), r.uniform(2.5, 4.5)] : null;
  for (let y = 0; y < n; y++) {
    for (let x = 0; x < n; x++) {
      let shade = 0.85 + 0.3 * Math.exp(-((x - hx) ** 2 + (y - hy) ** 2) / 18) + 0.04 * r.normal();
      let bare = 0;
      for (const [px, py] of holes) shade -= 0.55 * Math.exp(-((x - px!) ** 2 + (y - py!) ** 2) / 0.8);
      if (patch && Math.hypot(x - patch[0]!, y - patch[1]!) < patch[2]!) bare = 1;
      const p = (y * n + x) * 4;
      for (let c = 0; c < 3; c++) {
        const glaze = tint[c]! * shade;
        const body = [0.78, 0.7, 0.6][c]! + 0.05 * r.normal();
        png.data[p + c] = Math.round(255 * clamp(bare ? body : glaze, 0, 1));
      }
      png.data[p + 3] = 255;
    }
  }
  return PNG.sync.write(png);
}

/** An 8×8 thermal map of a kiln shelf, one byte per cell: even heat, or hotter at the front or back rows. */
function shelfMap(r: Random, kind: number): number[] {
  const cells: number[] = [];
  const base = r.uniform(90, 160);
  for (let y = 0; y < 8; y++) {
    for (let x = 0; x < 8; x++) {
      const gradient = kind === 0 ? 0 : (kind === 1 ? 7 - y : y) * r.uniform(6, 11);
      cells.push(Math.round(clamp(base + gradient + 10 * r.normal(), 0, 255)));
    }
  }
  return cells;
}

function idx(magicDims: number[], body: number[]): Buffer {
  const header = Buffer.alloc(4 * magicDims.length);
  magicDims.forEach((v, i) => header.writeUInt32BE(v, 4 * i));
  return Buffer.concat([header, Buffer.from(body)]);
}

await rm(out, { recursive: true, force: true });
await mkdir(out, { recursive: true });
await writeFile(join(out, 'kiln-firings.csv'), kilnCsv(rng, 400));
for (const kind of ['glossy', 'pinholed', 'crawled'] as const) {
  await mkdir(join(out, 'glaze-crops', kind), { recursive: true });
  for (let i = 0; i < 40; i++) await writeFile(join(out, 'glaze-crops', kind, `crop-${String(i).padStart(3, '0')}.png`), glazeCrop(rng, kind));
}
const maps: number[] = [];
const labels: number[] = [];
for (let i = 0; i < 300; i++) {
  const kind = i % 3;
  maps.push(...shelfMap(rng, kind));
  labels.push(kind);
}
await writeFile(join(out, 'shelf-heat-images-idx3-ubyte'), idx([0x00000803, 300, 8, 8], maps));
await writeFile(join(out, 'shelf-heat-labels-idx1-ubyte'), idx([0x00000801, 300], labels));
// Its own random stream, so the files above stay as they were.
await writeFile(join(out, 'kiln-shrinkage.csv'), shrinkageCsv(createRandom('netbreeder example shrinkage v1'), 500));
await writeFile(join(out, 'kiln-curves.csv'), generateKilnCurves({ firingsPerOutcome: 60, seed: 'netbreeder example kiln curves v1' }));
process.stdout.write(`wrote example data to ${out}\n`);
