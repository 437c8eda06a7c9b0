import type { Random } from '@netbreeder/shared-types';

/** Small helpers for drawing and nudging gene values inside a search space's ranges. */

/** A closed numeric range as the search space writes it. */
export interface NumericRange {
  min: number;
  max: number;
}

export const clamp = (v: number, r: NumericRange): number => Math.min(r.max, Math.max(r.min, v));

/** Rounds to `digits` significant digits, so genomes read well in reports (0.0012 rather than 0.00119837…). */
export function roundSignificant(v: number, digits = 4): number {
  if (v === 0 || !Number.isFinite(v)) return v;
  return Number(v.toPrecision(digits));
}

/** Rounds to 4 significant digits, then clamps into `r` so rounding never leaves the range. */
export const tidyInRange = (v: number, r: NumericRange): number => clamp(roundSignificant(v), r);

/**
 * A log-uniform integer in [min, max] (both inclusive): widths such as 8, 16, 32 … 256 are then
 * equally likely per doubling, as is common practice for layer sizes.
 */
export function logUniformInt(rng: Random, r: NumericRange): number {
  const lo = Math.max(1, r.min);
  if (r.max <= lo) return Math.max(r.min, Math.min(r.max, lo));
  return clamp(Math.floor(rng.logUniform(lo, r.max + 1)), r);
}

/** A log-uniform value in [min, max]; `min` must be above zero. */
export function logUniformIn(rng: Random, r: NumericRange): number {
  if (r.max <= r.min) return r.min;
  return tidyInRange(rng.logUniform(r.min, r.max), r);
}

/** A dropout rate uniform in `r`, rounded to hundredths (and kept in `r`). */
export const drawDropoutRate = (rng: Random, r: NumericRange): number => clamp(Math.round(rng.uniform(r.min, r.max) * 100) / 100, r);

/** One element of `items` other than `current`, or null when there is none. */
export function pickOther<T>(rng: Random, items: readonly T[], current: T): T | null {
  const others = items.filter((i) => i !== current);
  return others.length ? rng.pick(others) : null;
}

/**
 * A weight-decay value: exactly 0 half the time when the range allows 0 (most good networks use
 * little or none, common practice), otherwise log-uniform between max/100 (or min) and max.
 */
export function drawWeightDecay(rng: Random, r: NumericRange): number {
  if (r.max <= 0) return 0;
  if (r.min <= 0 && rng.chance(0.5)) return 0;
  const lo = r.min > 0 ? r.min : r.max / 100;
  return logUniformIn(rng, { min: lo, max: r.max });
}

/**
 * Multiplies `v` by 2^±u with u uniform in [0.25, 1] (a change of 19% to 100% on a log scale),
 * rounds and clamps into `r`. Tries the other direction when a bound swallows the change; null when
 * neither direction moves the value.
 */
export function perturbLog(rng: Random, v: number, r: NumericRange): number | null {
  const u = rng.uniform(0.25, 1);
  const sign = rng.chance(0.5) ? 1 : -1;
  for (const s of [sign, -sign]) {
    const next = tidyInRange(v * 2 ** (s * u), r);
    if (next !== v) return next;
  }
  return null;
}

/** One item drawn with probability proportional to its weight; items of weight ≤ 0 never win. */
export function weightedPick<T>(rng: Random, items: readonly (readonly [T, number])[]): T | null {
  const live = items.filter(([, w]) => w > 0);
  const total = live.reduce((a, [, w]) => a + w, 0);
  if (!live.length || !(total > 0)) return null;
  let r = rng.next() * total;
  for (const [item, w] of live) {
    r -= w;
    if (r < 0) return item;
  }
  return live[live.length - 1]![0];
}
