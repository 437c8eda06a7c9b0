import { DEFAULT_WORKER_WATTS, type AccountingStatus, type CpuFigures } from '@netbreeder/shared-types';
import type { CpuUsageRow } from '../store/trust-store.js';

/** How energy is estimated, for every place that shows it. */
export const ENERGY_NOTE =
  `energy = CPU-seconds × watts per busy core / 3600, from each worker's --watts; workers that did not set it ` +
  `count ${DEFAULT_WORKER_WATTS} W per busy core, an assumption (rule of thumb for an office desktop), shown as "assumed"`;

const empty = (): CpuFigures => ({ evaluations: 0, cpuSeconds: 0, cpuSecondsPerEvaluation: 0, wattHours: 0, assumedWattHours: 0 });

/** Adds aggregate rows into figures; CPU-seconds without watts are priced at the default (and counted as assumed). */
export function sumCpuUsage(rows: readonly CpuUsageRow[], defaultWatts = DEFAULT_WORKER_WATTS): CpuFigures {
  const out = empty();
  for (const r of rows) {
    const defaulted = (r.cpuSecondsWithoutWatts * defaultWatts) / 3600;
    out.evaluations += r.evaluations;
    out.cpuSeconds += r.cpuSeconds;
    out.wattHours += r.wattHours + defaulted;
    out.assumedWattHours += r.assumedWattHours + defaulted;
  }
  out.cpuSecondsPerEvaluation = out.evaluations > 0 ? out.cpuSeconds / out.evaluations : 0;
  return out;
}

/** A run's accounting: in total and by kind of job. */
export function summarizeAccounting(rows: readonly CpuUsageRow[], defaultWatts = DEFAULT_WORKER_WATTS): AccountingStatus {
  const of = (kind: CpuUsageRow['kind']) => sumCpuUsage(rows.filter((r) => r.kind === kind), defaultWatts);
  return { total: sumCpuUsage(rows, defaultWatts), search: of('search'), champion: of('champion'), verification: of('verification'), defaultWatts, energyNote: ENERGY_NOTE };
}

/** Each worker's figures in the run (one pass over the rows: /status calls it with every worker's rows). */
export function accountingByWorker(rows: readonly CpuUsageRow[], defaultWatts = DEFAULT_WORKER_WATTS): Map<string, CpuFigures> {
  const byWorker = new Map<string, CpuUsageRow[]>();
  for (const r of rows) {
    const own = byWorker.get(r.workerId);
    if (own) own.push(r);
    else byWorker.set(r.workerId, [r]);
  }
  return new Map([...byWorker].map(([id, own]) => [id, sumCpuUsage(own, defaultWatts)]));
}
