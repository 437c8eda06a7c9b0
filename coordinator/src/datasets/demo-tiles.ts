import { createRandom, type Random } from '@netbreeder/shared-types';
import { DatasetError } from './dataset-error.js';
import { paintChip, paintCrack, paintGlazeSpot, paintGlazeTexture, type TileCanvas } from './tile-painting.js';

/** Side of a demo tile crop in pixels. */
export const DEMO_TILE_SIZE = 16;

/** The four classes of the demo, in label order. */
export const DEMO_TILE_CLASS_NAMES = ['clean', 'crack', 'chip', 'glaze-spot'] as const;
export type DemoTileClassName = (typeof DEMO_TILE_CLASS_NAMES)[number];

/** Most tiles per class one call makes (4 classes × 100,000 × 1 KiB is already 400 MB). */
export const DEMO_TILES_MAX_PER_CLASS = 100_000;

/** What {@link generateDemoTiles} makes. The run file's `demo-tiles` source carries the defaults. */
export interface DemoTilesOptions {
  /** Tiles of each class; the result holds `4 × samplesPerClass` tiles. An integer in [1, 100,000]. */
  samplesPerClass: number;
  /** Seeds everything: the same seed and `samplesPerClass` always give the same bytes. */
  seed: number | string;
}

/** The invented demo dataset: grayscale tile crops, row-major `count × 16 × 16 × 1`, values in [0, 1]. */
export interface DemoTiles {
  inputShape: [number, number, number];
  classNames: string[];
  features: Float32Array;
  labels: Int32Array;
  count: number;
}

const PIXELS = DEMO_TILE_SIZE * DEMO_TILE_SIZE;
const DEG = Math.PI / 180;

/**
 * Camera and lighting ranges. With the shape ranges in tile-painting.ts they were tuned with a
 * throwaway probe (TensorFlow.js 4.22, 300 tiles per class, 80/20 train/validation, Adam, batch 32)
 * so that architecture matters. Measured on the cpu backend, data seed 11: a linear softmax
 * classifier reached 0.38 validation accuracy after 60 epochs (0.49 at its best epoch; it fits only
 * 0.48 of its own training data), a small conv net (conv 3×3×8 relu, max-pool 2, conv 3×3×16 relu,
 * max-pool 2, dense) 0.93 after 15 epochs (0.90 from epoch 9). Over three more data seeds the conv
 * net ended at 0.89 to 0.94 after 15 epochs and about 0.97 after 60; a 64-unit MLP about 0.51.
 * Making defects fainter or the lighting wilder slows the conv net first; the linear model is
 * already near chance on the crack, chip and spot classes.
 */
const LOOK = {
  /** Slight rotation of the tile under the camera, radians either way. */
  maxRotation: 10 * DEG,
  /** Shift of the crop, pixels either way. */
  maxJitter: 0.75,
  /** Mean glaze brightness. */
  brightness: [0.35, 0.65] as const,
  /** Contrast of the glaze texture and of every defect. */
  contrast: [0.7, 1.3] as const,
  /** Rise of the lighting gradient across the tile. */
  gradient: [0, 0.2] as const,
  /** Standard deviation of the per-pixel sensor noise. */
  noise: [0.01, 0.04] as const,
};

/**
 * Makes the invented demo dataset of a small ceramics workshop's glazing-line camera: 16×16
 * grayscale crops of glazed tiles in four classes — clean (glaze texture only), crack (a thin dark
 * line at a random angle, place and bend), chip (a missing corner, brighter or darker than the
 * glaze, at one of the four corners) and glaze spot (a soft round blob, darker or lighter). Every
 * tile gets its own lighting (brightness, contrast, gradient), sensor noise and a slight rotation
 * and shift. Pure and deterministic in `seed`; the tiles come in a shuffled class order.
 */
export function generateDemoTiles(options: DemoTilesOptions): DemoTiles {
  const { samplesPerClass, seed } = options;
  if (!Number.isInteger(samplesPerClass) || samplesPerClass < 1 || samplesPerClass > DEMO_TILES_MAX_PER_CLASS) {
    throw new DatasetError(
      'NB_DATASET_BAD_OPTIONS',
      `demo tiles: samplesPerClass must be an integer from 1 to ${DEMO_TILES_MAX_PER_CLASS}, got ${String(samplesPerClass)}; ` +
        'set dataset.samplesPerClass in the run file to such a number',
    );
  }
  const numClasses = DEMO_TILE_CLASS_NAMES.length;
  const count = samplesPerClass * numClasses;
  const rng = createRandom(`demo-tiles:${String(seed)}`);
  const order: number[] = [];
  for (let c = 0; c < numClasses; c++) for (let i = 0; i < samplesPerClass; i++) order.push(c);
  const labels = Int32Array.from(rng.shuffled(order));
  const features = new Float32Array(count * PIXELS);
  const canvas = createCanvas();
  for (let i = 0; i < count; i++) {
    paintTile(rng, labels[i]!, canvas);
    features.set(canvas.out, i * PIXELS);
  }
  return {
    inputShape: [DEMO_TILE_SIZE, DEMO_TILE_SIZE, 1],
    classNames: [...DEMO_TILE_CLASS_NAMES],
    features,
    labels,
    count,
  };
}

function createCanvas(): TileCanvas & { out: Float32Array } {
  return {
    size: DEMO_TILE_SIZE,
    u: new Float64Array(PIXELS),
    v: new Float64Array(PIXELS),
    content: new Float64Array(PIXELS),
    base: new Float64Array(PIXELS),
    out: new Float32Array(PIXELS),
  };
}

/** Paints one tile of class `label` into `canvas.out`. */
function paintTile(rng: Random, label: number, canvas: TileCanvas & { out: Float32Array }): void {
  const n = DEMO_TILE_SIZE;
  const half = n / 2;
  // Where each pixel centre lands on the tile: a slight rotation about the centre and a shift.
  const angle = rng.uniform(-LOOK.maxRotation, LOOK.maxRotation);
  const cos = Math.cos(angle);
  const sin = Math.sin(angle);
  const dx = rng.uniform(-LOOK.maxJitter, LOOK.maxJitter);
  const dy = rng.uniform(-LOOK.maxJitter, LOOK.maxJitter);
  for (let y = 0; y < n; y++) {
    for (let x = 0; x < n; x++) {
      const px = x + 0.5 - half - dx;
      const py = y + 0.5 - half - dy;
      canvas.u[y * n + x] = half + cos * px - sin * py;
      canvas.v[y * n + x] = half + sin * px + cos * py;
    }
  }
  // Lighting: brightness, contrast and a linear gradient in a random direction.
  const brightness = rng.uniform(LOOK.brightness[0], LOOK.brightness[1]);
  const contrast = rng.uniform(LOOK.contrast[0], LOOK.contrast[1]);
  const rise = rng.uniform(LOOK.gradient[0], LOOK.gradient[1]);
  const direction = rng.uniform(0, 2 * Math.PI);
  const gx = (rise * Math.cos(direction)) / n;
  const gy = (rise * Math.sin(direction)) / n;
  for (let p = 0; p < PIXELS; p++) {
    canvas.base[p] = brightness + gx * (canvas.u[p]! - half) + gy * (canvas.v[p]! - half);
  }
  canvas.content.fill(0);
  paintGlazeTexture(rng, canvas);
  const name = DEMO_TILE_CLASS_NAMES[label];
  if (name === 'crack') paintCrack(rng, canvas);
  else if (name === 'glaze-spot') paintGlazeSpot(rng, canvas);
  for (let p = 0; p < PIXELS; p++) canvas.content[p] = canvas.base[p]! + contrast * canvas.content[p]!;
  if (name === 'chip') paintChip(rng, canvas, contrast);
  const noise = rng.uniform(LOOK.noise[0], LOOK.noise[1]);
  for (let p = 0; p < PIXELS; p++) {
    const value = canvas.content[p]! + noise * rng.normal();
    canvas.out[p] = value < 0 ? 0 : value > 1 ? 1 : value;
  }
}
