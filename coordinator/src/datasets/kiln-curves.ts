import { createRandom, type Random } from '@netbreeder/shared-types';

/** How an invented firing went: the class of its temperature curve. */
export const KILN_OUTCOMES = ['good', 'cracked', 'underfired'] as const;
export type KilnOutcome = (typeof KILN_OUTCOMES)[number];

export interface KilnCurvesOptions {
  /** Firings per outcome. */
  firingsPerOutcome: number;
  seed: number | string;
  /** Minutes between two readings. @default 15 */
  minutesPerReading?: number;
}

/**
 * Invented kiln logs, one firing per sample, in the long format of a `sequences` dataset:
 * `firing,minute,temp_c,power_pct,outcome`, a reading every `minutesPerReading` minutes. A firing
 * ramps from room temperature to its peak, holds it, then cools. `good`: peak 1220–1260 °C, a
 * 20–40 min hold, slow cooling. `cracked`: like good but cooled fast (a crash cool through the
 * ~570 °C range). `underfired`: peak 1120–1190 °C or almost no hold. Ramp rates, firing lengths
 * and sensor noise vary, so lengths differ between firings. Pure and seeded: the same options
 * always give the same text. Nothing here is real data.
 */
export function generateKilnCurves(options: KilnCurvesOptions): string {
  const rng = createRandom(`kiln curves ${String(options.seed)}`);
  const step = options.minutesPerReading ?? 15;
  const rows = ['firing,minute,temp_c,power_pct,outcome'];
  let n = 0;
  const firings = KILN_OUTCOMES.flatMap((outcome) => Array.from({ length: options.firingsPerOutcome }, () => outcome));
  for (const outcome of rng.shuffled(firings)) {
    const id = `K${String(++n).padStart(4, '0')}`;
    for (const [minute, temp, power] of firingCurve(rng, outcome, step)) rows.push(`${id},${minute},${temp.toFixed(1)},${power.toFixed(0)},${outcome}`);
  }
  return `${rows.join('\n')}\n`;
}

/** One firing's readings: [minute, °C, element power %]. */
function firingCurve(rng: Random, outcome: KilnOutcome, step: number): Array<[number, number, number]> {
  const shortHold = outcome === 'underfired' && rng.chance(0.5);
  const peak = outcome === 'underfired' && !shortHold ? rng.uniform(1120, 1190) : rng.uniform(1220, 1260);
  const hold = shortHold ? rng.uniform(0, 5) : rng.uniform(20, 40);
  const ramp = rng.uniform(150, 220); // °C per hour
  const cooling = outcome === 'cracked' ? rng.uniform(300, 420) : rng.uniform(110, 170);
  const room = rng.uniform(15, 25);
  const rampEnd = ((peak - room) / ramp) * 60;
  const holdEnd = rampEnd + hold;
  const end = holdEnd + ((peak - 400) / cooling) * 60; // logged down to 400 °C
  const out: Array<[number, number, number]> = [];
  for (let minute = 0; minute <= end; minute += step) {
    let temp: number;
    let power: number;
    if (minute < rampEnd) [temp, power] = [room + (ramp * minute) / 60, 85 + rng.uniform(-5, 5)];
    else if (minute < holdEnd) [temp, power] = [peak, 45 + rng.uniform(-5, 5)];
    else [temp, power] = [peak - (cooling * (minute - holdEnd)) / 60, 0];
    out.push([minute, temp + rng.normal() * 3, power]);
  }
  return out;
}
