import { Gauge, type Registry } from 'prom-client';
import type { RunManager } from '../run/run-manager.js';
import type { RunRecord } from '../store/run-store.js';
import { runGauge } from './run-gauge.js';
import { summarizeAccounting } from '../trust/accounting.js';

/**
 * Verification and accounting metrics of `/metrics`, read from the store's aggregates at scrape time.
 *
 * | metric | type | labels | what |
 * |---|---|---|---|
 * | netbreeder_cpu_seconds | gauge | run, kind | CPU-seconds of the run's trainings by kind (search, verification, champion) |
 * | netbreeder_energy_watt_hours | gauge | run, kind, basis | estimated energy; basis `assumed` is the part priced at the default watts |
 * | netbreeder_verification_verdicts | gauge | run, verdict | verified results by verdict (confirmed, rejected, disputed, unverified) |
 * | netbreeder_workers_quarantined | gauge | | workers whose results no longer count |
 */
export function registerTrustMetrics(registry: Registry, manager: RunManager, currentRun: () => RunRecord | null): void {
  const registers = [registry];
  const trust = manager.verifier.trust;
  const kinds = ['search', 'verification', 'champion'] as const;
  runGauge(
    registers,
    currentRun,
    { name: 'netbreeder_cpu_seconds', help: "CPU-seconds (user + system) of the run's training processes, by kind of job.", labelNames: ['run', 'kind'] },
    (g, run) => {
      const a = summarizeAccounting(trust.cpuUsage(run.id));
      for (const kind of kinds) g.set({ run: run.id, kind }, a[kind].cpuSeconds);
    },
  );
  runGauge(
    registers,
    currentRun,
    {
      name: 'netbreeder_energy_watt_hours',
      help: "Estimated energy of the run's trainings (CPU-seconds x watts per busy core); basis 'assumed' is the part at the default watts, an assumption.",
      labelNames: ['run', 'kind', 'basis'],
    },
    (g, run) => {
      const a = summarizeAccounting(trust.cpuUsage(run.id));
      for (const kind of kinds) {
        g.set({ run: run.id, kind, basis: 'set' }, a[kind].wattHours - a[kind].assumedWattHours);
        g.set({ run: run.id, kind, basis: 'assumed' }, a[kind].assumedWattHours);
      }
    },
  );
  runGauge(registers, currentRun, { name: 'netbreeder_verification_verdicts', help: "The run's verified results by verdict.", labelNames: ['run', 'verdict'] }, (g, run) => {
    for (const [verdict, n] of Object.entries(trust.verdictCounts(run.id))) g.set({ run: run.id, verdict }, n);
  });
  new Gauge({
    name: 'netbreeder_workers_quarantined',
    help: 'Workers quarantined because their results repeatedly failed verification.',
    registers,
    collect() {
      this.set(trust.quarantinedWorkers().length);
    },
  });
}
