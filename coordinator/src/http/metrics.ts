import type { FastifyInstance } from 'fastify';
import { Counter, Gauge, Registry } from 'prom-client';
import type { EvaluationQueue } from '../queue/evaluation-queue.js';
import type { RunManager } from '../run/run-manager.js';
import { runMinutes } from '../run/status-report.js';
import type { RunRecord } from '../store/run-store.js';
import { registerTrustMetrics } from './trust-metrics.js';
import { runGauge } from './run-gauge.js';

/** What `/metrics` reads on each scrape. */
export interface MetricsOptions {
  manager: RunManager;
  /** For queue depth; without it `netbreeder_queue_jobs` is left out. */
  queue?: EvaluationQueue;
}

const EVALUATION_STATES = ['queued', 'running', 'done', 'failed'] as const;

/**
 * Builds the coordinator's Prometheus registry. Nothing is counted in memory: every value is read
 * from the store (or BullMQ's job counts) when scraped, so the numbers equal the store's and
 * survive a restart. Each call makes its own registry (not prom-client's global one), so several
 * coordinators in one process do not clash.
 *
 * | metric | type | labels | what |
 * |---|---|---|---|
 * | netbreeder_run_info | gauge | run, name, state | 1 for the run being watched |
 * | netbreeder_evaluations | gauge | run, kind, state | evaluations in the store by kind (search, champion) and state |
 * | netbreeder_throughput_evaluations_per_minute | gauge | run, window | done search evaluations per minute: `last_minute` or `since_start` |
 * | netbreeder_training_samples_per_second | gauge | | training speed summed over the alive workers training now (their last heartbeats) |
 * | netbreeder_queue_jobs | gauge | state | BullMQ jobs by state (waiting, prioritized, active, completed, failed, delayed) |
 * | netbreeder_workers_alive | gauge | | workers with a recent heartbeat that have not stopped |
 * | netbreeder_workers_known | gauge | | workers the store has ever heard from |
 * | netbreeder_best_validation_accuracy | gauge | run | best validation accuracy of the run's search so far (classification runs) |
 * | netbreeder_best_validation_rmse | gauge | run | regression runs: validation RMSE of the best result so far, in the target's units |
 * | netbreeder_best_validation_mae | gauge | run | regression runs: validation MAE of the same result, in the target's units |
 * | netbreeder_best_validation_r2 | gauge | run | regression runs: validation R² (coefficient of determination) of the same result |
 * | netbreeder_reissues_total | counter | run | failed attempts given to a new evaluation ('reissued' events) |
 * | netbreeder_rejected_inputs_total | counter | kind | results (`result`) and HTTP requests (`request`) refused, over the whole store |
 */
export function createMetricsRegistry(opts: MetricsOptions): Registry {
  const { manager } = opts;
  const store = manager.store;
  const registry = new Registry();
  const registers = [registry];
  const currentRun = (): RunRecord | null => manager.currentRun() ?? store.listRuns()[0] ?? null;

  runGauge(registers, currentRun, { name: 'netbreeder_run_info', help: 'The run being watched (value 1), with its name and state.', labelNames: ['run', 'name', 'state'] }, (g, run) =>
    g.set({ run: run.id, name: run.name, state: run.state }, 1),
  );

  runGauge(registers, currentRun, { name: 'netbreeder_evaluations', help: 'Evaluations of the run in the store, by kind and state.', labelNames: ['run', 'kind', 'state'] }, (g, run) => {
    for (const kind of ['search', 'champion'] as const) {
      const counts = store.counts(run.id, kind);
      for (const state of EVALUATION_STATES) g.set({ run: run.id, kind, state }, counts[state]);
    }
  });

  runGauge(
    registers,
    currentRun,
    { name: 'netbreeder_throughput_evaluations_per_minute', help: 'Done search evaluations per minute, over the last minute or since the search started.', labelNames: ['run', 'window'] },
    (g, run) => {
      const now = Date.now();
      g.set({ run: run.id, window: 'last_minute' }, store.doneSince(run.id, now - 60_000));
      g.set({ run: run.id, window: 'since_start' }, store.counts(run.id, 'search').done / runMinutes(run, now));
    },
  );

  const aliveWorkers = () => store.listWorkers().filter((w) => manager.workers.isAlive(w.lastSeenAt) && w.heartbeat.state !== 'stopped');

  new Gauge({
    name: 'netbreeder_training_samples_per_second',
    help: 'Training samples per second summed over the alive workers that are training now (each at the speed of its last evaluation, from its heartbeat).',
    registers,
    collect() {
      this.set(aliveWorkers().filter((w) => w.heartbeat.state === 'training').reduce((sum, w) => sum + w.heartbeat.samplesPerSecond, 0));
    },
  });

  if (opts.queue) {
    const queue = opts.queue;
    new Gauge({
      name: 'netbreeder_queue_jobs',
      help: 'Jobs in the Redis queue by BullMQ state.',
      labelNames: ['state'],
      registers,
      async collect() {
        this.reset();
        for (const [state, n] of Object.entries(await queue.counts())) this.set({ state }, n);
      },
    });
  }

  new Gauge({
    name: 'netbreeder_workers_alive',
    help: 'Workers with a recent heartbeat that have not stopped.',
    registers,
    collect() {
      this.set(aliveWorkers().length);
    },
  });

  new Gauge({
    name: 'netbreeder_workers_known',
    help: 'Workers the store has heard from, alive or not.',
    registers,
    collect() {
      this.set(store.listWorkers().length);
    },
  });

  runGauge(
    registers,
    currentRun,
    { name: 'netbreeder_best_validation_accuracy', help: "Best validation accuracy of the run's search so far, among the results that count (as /status).", labelNames: ['run'] },
    (g, run) => {
      const best = manager.verifier.bestResult(run.id);
      if (best?.valAccuracy != null && !run.dataset.manifest.target) g.set({ run: run.id }, best.valAccuracy);
    },
  );

  const regressionGauges = [
    ['rmse', "validation RMSE, in the target's units,"],
    ['mae', "validation MAE (mean absolute error), in the target's units,"],
    ['r2', 'validation R² (coefficient of determination)'],
  ] as const;
  for (const [key, what] of regressionGauges) {
    runGauge(
      registers,
      currentRun,
      { name: `netbreeder_best_validation_${key}`, help: `Regression runs: ${what} of the best result of the run's search so far (as /status).`, labelNames: ['run'] },
      (g, run) => {
        const value = manager.verifier.bestResult(run.id)?.result?.valRegression?.[key];
        if (value != null) g.set({ run: run.id }, value);
      },
    );
  }

  new Counter({
    name: 'netbreeder_reissues_total',
    help: "Failed attempts of the run given to a new evaluation ('reissued' events in the store).",
    labelNames: ['run'],
    registers,
    collect() {
      this.reset();
      const run = currentRun();
      if (run) this.inc({ run: run.id }, store.countEvents('reissued', run.id));
    },
  });

  new Counter({
    name: 'netbreeder_rejected_inputs_total',
    help: "Inputs refused, over the whole store: worker results ('rejected-result') and HTTP requests ('rejected-request').",
    labelNames: ['kind'],
    registers,
    collect() {
      this.reset();
      this.inc({ kind: 'result' }, store.countEvents('rejected-result'));
      this.inc({ kind: 'request' }, store.countEvents('rejected-request'));
    },
  });

  // CPU time, energy, verdicts and quarantined workers (listed in ./trust-metrics.ts).
  registerTrustMetrics(registry, manager, currentRun);
  return registry;
}

/** Serves `GET /metrics` in Prometheus's text format from a registry of this server's own. */
export function registerMetricsRoute(app: FastifyInstance, opts: MetricsOptions): void {
  const registry = createMetricsRegistry(opts);
  app.get('/metrics', async (_req, reply) => reply.type(registry.contentType).header('cache-control', 'no-store').send(await registry.metrics()));
}
