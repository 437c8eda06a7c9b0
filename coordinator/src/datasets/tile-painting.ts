import type { Random } from '@netbreeder/shared-types';

/**
 * Scratch buffers of one demo tile being painted. `u` and `v` hold where each pixel centre lands on
 * the (slightly rotated, shifted) tile, in pixels from its top-left corner; `base` the lighting at
 * that pixel; `content` first the glaze texture and defects relative to the glaze (before contrast
 * and lighting), then, once the caller has lit it, absolute brightness.
 */
export interface TileCanvas {
  size: number;
  u: Float64Array;
  v: Float64Array;
  base: Float64Array;
  content: Float64Array;
}

/** Ranges of each painted structure, tuned with the probe described beside `LOOK` in demo-tiles.ts. */
const SHAPES = {
  /** Glaze texture: smooth value noise on a lattice of this many pixels, with this amplitude. */
  textureCell: 4,
  textureAmplitude: [0.01, 0.03] as const,
  /** Crack: darkening at its core, Gaussian half-width, half-length, bend, jaggedness. */
  crackDepth: [0.3, 0.55] as const,
  crackWidth: [0.45, 0.7] as const,
  crackHalfLength: [5, 10] as const,
  crackBend: 0.05,
  crackJag: 0.25,
  /** Crack centre: this far from the tile centre at most, each axis. */
  crackOffset: 4,
  /** Chip: legs of the cut-off corner triangle, and its brightness step (either sign). */
  chipLeg: [3.5, 7.5] as const,
  chipStep: [0.35, 0.55] as const,
  /** Glaze spot: peak brightness change (either sign), Gaussian radius, centre margin. */
  spotAmplitude: [0.3, 0.5] as const,
  spotRadius: [1.2, 2.0] as const,
  spotMargin: 2.5,
};

const smooth = (t: number): number => t * t * (3 - 2 * t);
const uniformIn = (rng: Random, range: readonly [number, number]): number => rng.uniform(range[0], range[1]);

/** Adds a smooth, low-contrast glaze texture (value noise) to `content`. */
export function paintGlazeTexture(rng: Random, canvas: TileCanvas): void {
  const cell = SHAPES.textureCell;
  // Lattice from one cell before the tile to one after it, so rotated and shifted pixels stay inside.
  const nodes = Math.ceil(canvas.size / cell) + 3;
  const amplitude = uniformIn(rng, SHAPES.textureAmplitude);
  const lattice = new Float64Array(nodes * nodes);
  for (let i = 0; i < lattice.length; i++) lattice[i] = amplitude * rng.normal();
  const at = (i: number, j: number): number => lattice[Math.min(nodes - 1, Math.max(0, j)) * nodes + Math.min(nodes - 1, Math.max(0, i))]!;
  for (let p = 0; p < canvas.content.length; p++) {
    const gu = canvas.u[p]! / cell + 1;
    const gv = canvas.v[p]! / cell + 1;
    const i = Math.floor(gu);
    const j = Math.floor(gv);
    const fu = smooth(gu - i);
    const fv = smooth(gv - j);
    const top = at(i, j) * (1 - fu) + at(i + 1, j) * fu;
    const bottom = at(i, j + 1) * (1 - fu) + at(i + 1, j + 1) * fu;
    canvas.content[p] = canvas.content[p]! + top * (1 - fv) + bottom * fv;
  }
}

/**
 * Darkens a thin crack into `content`: a slightly bent, slightly jagged polyline through a point
 * near the centre, at a random angle, with a Gaussian cross-section.
 */
export function paintCrack(rng: Random, canvas: TileCanvas): void {
  const centre = canvas.size / 2;
  const cu = centre + rng.uniform(-SHAPES.crackOffset, SHAPES.crackOffset);
  const cv = centre + rng.uniform(-SHAPES.crackOffset, SHAPES.crackOffset);
  const angle = rng.uniform(0, Math.PI);
  const du = Math.cos(angle);
  const dv = Math.sin(angle);
  const halfLength = uniformIn(rng, SHAPES.crackHalfLength);
  const bend = rng.uniform(-SHAPES.crackBend, SHAPES.crackBend);
  const depth = uniformIn(rng, SHAPES.crackDepth);
  const width = uniformIn(rng, SHAPES.crackWidth);
  const segments = 8;
  const pu = new Float64Array(segments + 1);
  const pv = new Float64Array(segments + 1);
  for (let k = 0; k <= segments; k++) {
    const t = -halfLength + (2 * halfLength * k) / segments;
    const side = bend * t * t + SHAPES.crackJag * rng.normal();
    pu[k] = cu + t * du - side * dv;
    pv[k] = cv + t * dv + side * du;
  }
  const twoW2 = 2 * width * width;
  for (let p = 0; p < canvas.content.length; p++) {
    const d2 = squaredDistanceToPolyline(canvas.u[p]!, canvas.v[p]!, pu, pv);
    if (d2 < 9 * twoW2) canvas.content[p] = canvas.content[p]! - depth * Math.exp(-d2 / twoW2);
  }
}

/** Adds a soft round blob, darker or lighter than the glaze, into `content`. */
export function paintGlazeSpot(rng: Random, canvas: TileCanvas): void {
  const margin = SHAPES.spotMargin;
  const su = rng.uniform(margin, canvas.size - margin);
  const sv = rng.uniform(margin, canvas.size - margin);
  const radius = uniformIn(rng, SHAPES.spotRadius);
  const amplitude = (rng.chance(0.5) ? 1 : -1) * uniformIn(rng, SHAPES.spotAmplitude);
  const twoR2 = 2 * radius * radius;
  for (let p = 0; p < canvas.content.length; p++) {
    const du = canvas.u[p]! - su;
    const dv = canvas.v[p]! - sv;
    canvas.content[p] = canvas.content[p]! + amplitude * Math.exp(-(du * du + dv * dv) / twoR2);
  }
}

/**
 * Cuts one corner off the lit tile in `content` (absolute brightness by now): inside a triangle
 * with random legs at one of the four corners the camera sees a flat surface (the belt below or
 * the unglazed body), brighter or darker than the glaze by a random step, with a soft edge. The
 * corner is the crop's own (in pixel coordinates), so rotation and shift never move it out of view;
 * unequal random legs already tilt the cut.
 */
export function paintChip(rng: Random, canvas: TileCanvas, contrast: number): void {
  const corner = rng.int(0, 3);
  const ku = corner % 2 === 0 ? 0 : canvas.size;
  const kv = corner < 2 ? 0 : canvas.size;
  const a = uniformIn(rng, SHAPES.chipLeg);
  const b = uniformIn(rng, SHAPES.chipLeg);
  const step = (rng.chance(0.5) ? 1 : -1) * contrast * uniformIn(rng, SHAPES.chipStep);
  // Distance from the cut line |u - ku| / a + |v - kv| / b = 1, negative inside the chip.
  const scale = (a * b) / Math.hypot(a, b);
  const softness = 0.35;
  for (let p = 0; p < canvas.content.length; p++) {
    const x = (p % canvas.size) + 0.5;
    const y = Math.floor(p / canvas.size) + 0.5;
    const s = Math.abs(x - ku) / a + Math.abs(y - kv) / b - 1;
    const inside = 1 / (1 + Math.exp((s * scale) / softness));
    if (inside < 1e-4) continue;
    const surface = canvas.base[p]! + step;
    canvas.content[p] = canvas.content[p]! * (1 - inside) + surface * inside;
  }
}

function squaredDistanceToPolyline(u: number, v: number, pu: Float64Array, pv: Float64Array): number {
  let best = Infinity;
  for (let k = 0; k + 1 < pu.length; k++) {
    const au = pu[k]!;
    const av = pv[k]!;
    const eu = pu[k + 1]! - au;
    const ev = pv[k + 1]! - av;
    const length2 = eu * eu + ev * ev;
    let t = length2 > 0 ? ((u - au) * eu + (v - av) * ev) / length2 : 0;
    t = t < 0 ? 0 : t > 1 ? 1 : t;
    const wu = u - au - t * eu;
    const wv = v - av - t * ev;
    const d2 = wu * wu + wv * wv;
    if (d2 < best) best = d2;
  }
  return best;
}
