import { Gauge, type Registry } from 'prom-client';
import type { RunRecord } from '../store/run-store.js';

/**
 * A gauge about the watched run, filled at scrape time: cleared first (so a label set of an earlier
 * run does not linger), left empty while there is no run, else `fill`ed from the store.
 */
export function runGauge(
  registers: Registry[],
  currentRun: () => RunRecord | null,
  config: { name: string; help: string; labelNames: string[] },
  fill: (gauge: Gauge, run: RunRecord) => void,
): Gauge {
  return new Gauge({
    ...config,
    registers,
    collect() {
      this.reset();
      const run = currentRun();
      if (run) fill(this, run);
    },
  });
}
