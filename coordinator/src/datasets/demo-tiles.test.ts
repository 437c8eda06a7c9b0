import { describe, expect, it } from 'vitest';
import { DatasetError } from './dataset-error.js';
import { DEMO_TILE_CLASS_NAMES, generateDemoTiles, type DemoTiles } from './demo-tiles.js';

const N = 16;
const PIXELS = N * N;
const CLEAN = DEMO_TILE_CLASS_NAMES.indexOf('clean');
const CRACK = DEMO_TILE_CLASS_NAMES.indexOf('crack');
const CHIP = DEMO_TILE_CLASS_NAMES.indexOf('chip');
const SPOT = DEMO_TILE_CLASS_NAMES.indexOf('glaze-spot');

const bytes = (a: Float32Array | Int32Array): Buffer => Buffer.from(a.buffer, a.byteOffset, a.byteLength);

/** Image statistics measured on the pixels alone, knowing nothing of how the tiles were painted. */
const at = (t: DemoTiles, i: number, x: number, y: number): number => t.features[i * PIXELS + y * N + x]!;

/** Pixels darker than the mean of their two neighbours two steps away, in any of four directions,
 * by more than 0.12: a thin dark line lights up along its length, a smooth surface nowhere. */
function thinDarkPixels(t: DemoTiles, i: number): number {
  let count = 0;
  for (let y = 2; y < N - 2; y++) {
    for (let x = 2; x < N - 2; x++) {
      const c = at(t, i, x, y);
      const drops = [
        (at(t, i, x - 2, y) + at(t, i, x + 2, y)) / 2 - c,
        (at(t, i, x, y - 2) + at(t, i, x, y + 2)) / 2 - c,
        (at(t, i, x - 2, y - 2) + at(t, i, x + 2, y + 2)) / 2 - c,
        (at(t, i, x - 2, y + 2) + at(t, i, x + 2, y - 2)) / 2 - c,
      ];
      if (Math.max(...drops) > 0.12) count++;
    }
  }
  return count;
}

const block2 = (t: DemoTiles, i: number, x: number, y: number): number =>
  (at(t, i, x, y) + at(t, i, x + 1, y) + at(t, i, x, y + 1) + at(t, i, x + 1, y + 1)) / 4;

/** The corner 2×2 block that least follows the plane through three blocks 7 pixels further in
 * (c ≈ a + b − d holds exactly for a lighting gradient): its signed residual and which corner. */
function cornerResidual(t: DemoTiles, i: number): { residual: number; corner: number } {
  let best = { residual: 0, corner: -1 };
  const k = 7;
  let corner = 0;
  for (const [cy, sy] of [[0, 1], [N - 2, -1]] as const) {
    for (const [cx, sx] of [[0, 1], [N - 2, -1]] as const) {
      const plane = block2(t, i, cx + sx * k, cy) + block2(t, i, cx, cy + sy * k) - block2(t, i, cx + sx * k, cy + sy * k);
      const residual = block2(t, i, cx, cy) - plane;
      if (Math.abs(residual) > Math.abs(best.residual)) best = { residual, corner };
      corner++;
    }
  }
  return best;
}

/** Largest centre-surround difference: the 3×3 mean minus the mean of a ring of radius about 3
 * (zero for any plane, so the lighting gradient cancels); signed, with the largest magnitude. */
function blobContrast(t: DemoTiles, i: number): number {
  const ring = [[3, 0], [-3, 0], [0, 3], [0, -3], [2, 2], [2, -2], [-2, 2], [-2, -2]] as const;
  let best = 0;
  for (let y = 3; y < N - 3; y++) {
    for (let x = 3; x < N - 3; x++) {
      let centre = 0;
      for (let dy = -1; dy <= 1; dy++) for (let dx = -1; dx <= 1; dx++) centre += at(t, i, x + dx, y + dy);
      let around = 0;
      for (const [dx, dy] of ring) around += at(t, i, x + dx, y + dy);
      const d = centre / 9 - around / ring.length;
      if (Math.abs(d) > Math.abs(best)) best = d;
    }
  }
  return best;
}

const ofClass = (t: DemoTiles, label: number): number[] => [...t.labels.keys()].filter((i) => t.labels[i] === label);
const mean = (values: number[]): number => values.reduce((a, b) => a + b, 0) / values.length;

/**
 * Checks that `statistic` tells tiles of `label` from clean ones: the class mean is higher, and
 * the threshold halfway between the two means puts at least 90% of each group on its own side.
 */
function expectSeparatesFromClean(t: DemoTiles, label: number, statistic: (i: number) => number): void {
  const defect = ofClass(t, label).map(statistic);
  const clean = ofClass(t, CLEAN).map(statistic);
  const threshold = (mean(defect) + mean(clean)) / 2;
  expect(mean(defect)).toBeGreaterThan(mean(clean));
  expect(defect.filter((v) => v > threshold).length / defect.length).toBeGreaterThanOrEqual(0.9);
  expect(clean.filter((v) => v <= threshold).length / clean.length).toBeGreaterThanOrEqual(0.9);
}

/**
 * A least-squares linear classifier (ridge regression onto one-hot targets, with a bias), fitted
 * in closed form; the best of a few ridge strengths on the held-out tiles is reported, to be fair
 * to it. Returns held-out accuracy. `x` holds `d` features per sample.
 */
function linearAccuracy(train: { x: Float64Array; labels: Int32Array }, test: { x: Float64Array; labels: Int32Array }, d: number): number {
  const k = 4;
  const dim = d + 1;
  const n = train.labels.length;
  const gram = new Float64Array(dim * dim);
  const xty = new Float64Array(dim * k);
  const row = new Float64Array(dim);
  for (let i = 0; i < n; i++) {
    row.set(train.x.subarray(i * d, (i + 1) * d));
    row[d] = 1;
    for (let a = 0; a < dim; a++) {
      const ra = row[a]!;
      for (let b = a; b < dim; b++) gram[a * dim + b]! += ra * row[b]!;
      xty[a * k + train.labels[i]!]! += ra;
    }
  }
  let best = 0;
  for (const ridge of [0.1, 1, 10, 100]) {
    // Cholesky of gram + ridge·I (bias not penalised), then two triangular solves per class.
    const chol = new Float64Array(dim * dim);
    for (let i = 0; i < dim; i++) {
      for (let j = 0; j <= i; j++) {
        let sum = gram[j * dim + i]! + (i === j && i < d ? ridge : 0);
        for (let m = 0; m < j; m++) sum -= chol[i * dim + m]! * chol[j * dim + m]!;
        chol[i * dim + j] = i === j ? Math.sqrt(sum) : sum / chol[j * dim + j]!;
      }
    }
    const w = new Float64Array(dim * k);
    for (let c = 0; c < k; c++) {
      const z = new Float64Array(dim);
      for (let i = 0; i < dim; i++) {
        let sum = xty[i * k + c]!;
        for (let m = 0; m < i; m++) sum -= chol[i * dim + m]! * z[m]!;
        z[i] = sum / chol[i * dim + i]!;
      }
      for (let i = dim - 1; i >= 0; i--) {
        let sum = z[i]!;
        for (let m = i + 1; m < dim; m++) sum -= chol[m * dim + i]! * w[m * k + c]!;
        w[i * k + c] = sum / chol[i * dim + i]!;
      }
    }
    let correct = 0;
    for (let i = 0; i < test.labels.length; i++) {
      let top = 0;
      let topScore = -Infinity;
      for (let c = 0; c < k; c++) {
        let score = w[d * k + c]!;
        for (let j = 0; j < d; j++) score += test.x[i * d + j]! * w[j * k + c]!;
        if (score > topScore) [top, topScore] = [c, score];
      }
      if (top === test.labels[i]) correct++;
    }
    best = Math.max(best, correct / test.labels.length);
  }
  return best;
}

/** The three local statistics above, one row per tile, scaled to about unit range. */
function localStatistics(t: DemoTiles): Float64Array {
  const x = new Float64Array(t.count * 3);
  for (let i = 0; i < t.count; i++) {
    x[i * 3] = thinDarkPixels(t, i) / 20;
    x[i * 3 + 1] = Math.abs(cornerResidual(t, i).residual) * 5;
    x[i * 3 + 2] = Math.abs(blobContrast(t, i)) * 5;
  }
  return x;
}

describe('generateDemoTiles', () => {
  const tiles = generateDemoTiles({ samplesPerClass: 100, seed: 42 });

  it('makes 16×16×1 tiles of the four classes, four times samplesPerClass of them', () => {
    expect(tiles.inputShape).toEqual([16, 16, 1]);
    expect(tiles.classNames).toEqual(['clean', 'crack', 'chip', 'glaze-spot']);
    expect(tiles.count).toBe(400);
    expect(tiles.features.length).toBe(400 * PIXELS);
    expect(tiles.labels.length).toBe(400);
  });

  it('is deterministic in the seed: same seed, same bytes; another seed, other bytes', () => {
    const again = generateDemoTiles({ samplesPerClass: 100, seed: 42 });
    expect(bytes(again.features).equals(bytes(tiles.features))).toBe(true);
    expect(bytes(again.labels).equals(bytes(tiles.labels))).toBe(true);
    const other = generateDemoTiles({ samplesPerClass: 100, seed: 43 });
    expect(bytes(other.features).equals(bytes(tiles.features))).toBe(false);
    expect(bytes(other.labels).equals(bytes(tiles.labels))).toBe(false);
    const named = generateDemoTiles({ samplesPerClass: 100, seed: '42' });
    expect(bytes(named.features).equals(bytes(tiles.features))).toBe(true);
  });

  it('keeps every pixel in [0, 1] and uses the range (no blank or saturated tiles)', () => {
    let min = Infinity;
    let max = -Infinity;
    let nonFinite = 0;
    for (const v of tiles.features) {
      if (!Number.isFinite(v)) nonFinite++;
      min = Math.min(min, v);
      max = Math.max(max, v);
    }
    expect(nonFinite).toBe(0);
    expect(min).toBeGreaterThanOrEqual(0);
    expect(max).toBeLessThanOrEqual(1);
    const odd: number[] = [];
    for (let i = 0; i < tiles.count; i++) {
      const tile = tiles.features.subarray(i * PIXELS, (i + 1) * PIXELS);
      const m = tile.reduce((a, b) => a + b, 0) / PIXELS;
      const sd = Math.sqrt(tile.reduce((a, b) => a + (b - m) ** 2, 0) / PIXELS);
      // Sensor noise alone gives a spread of at least 0.01; no tile is near black or white.
      if (m < 0.1 || m > 0.9 || sd < 0.005) odd.push(i);
    }
    expect(odd).toEqual([]);
  });

  it('holds exactly samplesPerClass tiles of each class, in a shuffled order', () => {
    for (let c = 0; c < 4; c++) expect(ofClass(tiles, c).length).toBe(100);
    // A sorted order changes label 3 times; a shuffled one of 4 balanced classes about 300 times.
    let changes = 0;
    for (let i = 1; i < tiles.count; i++) if (tiles.labels[i] !== tiles.labels[i - 1]) changes++;
    expect(changes).toBeGreaterThan(200);
    // The first quarter is not one class.
    expect(new Set(tiles.labels.subarray(0, 100)).size).toBe(4);
  });

  it('draws clean tiles with no pixel statistic of a defect', () => {
    const clean = ofClass(tiles, CLEAN);
    expect(mean(clean.map((i) => thinDarkPixels(tiles, i)))).toBeLessThan(5);
    expect(mean(clean.map((i) => Math.abs(cornerResidual(tiles, i).residual)))).toBeLessThan(0.1);
    expect(mean(clean.map((i) => Math.abs(blobContrast(tiles, i))))).toBeLessThan(0.08);
  });

  it('draws cracks as thin dark lines', () => {
    expectSeparatesFromClean(tiles, CRACK, (i) => thinDarkPixels(tiles, i));
    // A line, not a dot: on average many pixels along it (half-lengths start at 5 pixels).
    expect(mean(ofClass(tiles, CRACK).map((i) => thinDarkPixels(tiles, i)))).toBeGreaterThan(10);
  });

  it('draws chips as a corner off the lighting plane, at all four corners, brighter or darker', () => {
    expectSeparatesFromClean(tiles, CHIP, (i) => Math.abs(cornerResidual(tiles, i).residual));
    const found = ofClass(tiles, CHIP).map((i) => cornerResidual(tiles, i));
    for (let corner = 0; corner < 4; corner++) expect(found.filter((f) => f.corner === corner).length).toBeGreaterThan(10);
    expect(found.filter((f) => f.residual > 0).length).toBeGreaterThan(25);
    expect(found.filter((f) => f.residual < 0).length).toBeGreaterThan(25);
  });

  it('draws glaze spots as soft blobs, darker or lighter than the glaze', () => {
    expectSeparatesFromClean(tiles, SPOT, (i) => Math.abs(blobContrast(tiles, i)));
    const contrasts = ofClass(tiles, SPOT).map((i) => blobContrast(tiles, i));
    expect(contrasts.filter((d) => d > 0).length).toBeGreaterThan(25);
    expect(contrasts.filter((d) => d < 0).length).toBeGreaterThan(25);
  });

  it('needs local, non-linear features: a linear read of the pixels fails where the same model on local statistics works', () => {
    // The design asks that a linear model do clearly worse than a small conv net. A conv net's
    // first layers compute local non-linear features like the three statistics above; a linear
    // classifier on the raw pixels cannot. The 0.75 bound is the design brief's target for the
    // linear model. (Trained models are measured by the probe noted in demo-tiles.ts, not here.)
    const train = generateDemoTiles({ samplesPerClass: 300, seed: 1 });
    const test = generateDemoTiles({ samplesPerClass: 100, seed: 2 });
    const pixels = linearAccuracy({ x: Float64Array.from(train.features), labels: train.labels }, { x: Float64Array.from(test.features), labels: test.labels }, PIXELS);
    const local = linearAccuracy({ x: localStatistics(train), labels: train.labels }, { x: localStatistics(test), labels: test.labels }, 3);
    expect(pixels).toBeLessThan(0.75);
    expect(local).toBeGreaterThanOrEqual(0.85);
    expect(local - pixels).toBeGreaterThan(0.25);
  });

  it('refuses a samplesPerClass that is not a positive integer, naming the option', () => {
    for (const bad of [0, -3, 2.5, Number.NaN, 1_000_000]) {
      expect(() => generateDemoTiles({ samplesPerClass: bad, seed: 1 })).toThrow(DatasetError);
      try {
        generateDemoTiles({ samplesPerClass: bad, seed: 1 });
      } catch (error) {
        expect((error as DatasetError).code).toBe('NB_DATASET_BAD_OPTIONS');
        expect((error as Error).message).toContain('samplesPerClass');
      }
    }
  });
});
