/**
 * `npm run bench:search`: does the search beat one hand-made network at equal CPU? On each task
 * (real MNIST digits; the invented demo tiles), each method runs once per seed through the real
 * coordinator (run manager, SQLite store, BullMQ queue on the local Redis) and real worker
 * processes training with TensorFlow.js, and the run's reference network is trained once per seed
 * with the task's whole budget (the reference row). Equal CPU means equal training samples seen:
 * the search's samples plus every final training of its champion phase on one side, the reference
 * row's on the other. A run's search spends the search's share (`budget.maxSamples`: the
 * coordinator finishes the run once its recorded results reach it, giving up what is still queued
 * or training, and records no result past it); the champion phase trains the search's champion and
 * the run's reference network (the held-back check, the report's comparison), each capped at half
 * the rest (`champion.maxSamples`). The champion is chosen on validation evidence and scored once
 * on the held-out test split.
 *
 * Prints one line per finished run to stderr, then a table per task, then one JSON line with every
 * figure (keys name task, method and figure).
 *
 *   npm run bench:search [-- --seeds 5 --tasks mnist,tiles --methods asha-evolution,random --quick]
 */
import { mkdtemp, readFile, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { parseArgs } from 'node:util';
import { randomBytes } from 'node:crypto';
import type { ChildProcess } from 'node:child_process';
import { decodeShard, type EvaluationResult, type ModelArtifactsMessage, type SearchAlgorithmName } from '@netbreeder/shared-types';
import { Coordinator } from '../src/coordinator.js';
import { createLogger } from '../src/logger.js';
import { spawnWorker } from '../src/cli/spawn-worker.js';
import type { EvaluationRecord } from '../src/store/run-store.js';
import { DISCARDED_AT_FINISH } from '../src/run/run-manager.js';
import { newSamples } from '../src/run/sample-budget.js';
import { PARENT_RANKINGS, type ParentRanking } from '../src/search/search-settings.js';
import { referenceComparison } from '../src/champion/reference-comparison.js';
import { heldBackPair } from '../src/champion/held-back-check.js';
import { scoreEnsemble } from '../src/champion/score-ensemble.js';
import type { RunRecord, RunStore } from '../src/store/run-store.js';
import { budgetCurve, countedWithin, type SpentEvaluation } from './search-bench-budget.js';
import { mnistTask, tilesTask, TASK_NAMES, type BenchTask, type TaskName } from './search-bench-tasks.js';
import { referenceRows, type ReferenceOutcome } from './search-bench-reference.js';
import { summarize, taskTable, type HeldBackSide, type MethodSummary, type RunOutcome } from './search-bench-report.js';

const METHODS: readonly SearchAlgorithmName[] = ['random', 'aging-evolution', 'asha', 'asha-evolution'];
/** The bench's main row: multi-fidelity evolution with weight inheritance, the run file's default algorithm (chosen on this bench: docs/search-benchmark.md). */
const DEFAULT_METHOD: SearchAlgorithmName = 'asha-evolution';
const FRACTIONS = [0.1, 0.25, 0.5, 0.75, 1] as const;
/** Test error % on MNIST: LeCun, Bottou, Bengio, Haffner, Proc. IEEE 86(11), 1998, results table (60,000 training digits). */
const LECUN_1998 = [
  { model: 'linear classifier (1-layer)', testErrorPct: 12.0 },
  { model: '2-layer NN, 300 hidden units', testErrorPct: 4.7 },
  { model: 'LeNet-1', testErrorPct: 1.7 },
] as const;

const { values: args } = parseArgs({
  options: {
    seeds: { type: 'string' },
    budget: { type: 'string' },
    tasks: { type: 'string' },
    methods: { type: 'string' },
    workers: { type: 'string' },
    'champion-share': { type: 'string' },
    'cold-start': { type: 'boolean' },
    'no-held-back-check': { type: 'boolean' },
    'no-reference-row': { type: 'boolean' },
    'reference-only': { type: 'boolean' },
    'min-epochs': { type: 'string' },
    'max-epochs': { type: 'string' },
    'promote-reference': { type: 'boolean' },
    parents: { type: 'string' },
    population: { type: 'string' },
    keep: { type: 'boolean' },
    quick: { type: 'boolean' },
    help: { type: 'boolean' },
  },
});
if (args.help) {
  process.stdout.write(
    'npm run bench:search [-- options]\n' +
      '  --seeds N             runs per method and task, search seeds 1..N (default 5; --quick: 1)\n' +
      '  --budget N            training samples per run, search and champion together (default: mnist 180000, tiles 36000)\n' +
      `  --tasks A,B           which of ${TASK_NAMES.join(', ')} (default all; --quick: tiles)\n` +
      `  --methods A,B         which of ${METHODS.join(', ')} (default ${DEFAULT_METHOD},random)\n` +
      '  --workers N           local worker processes (default 2)\n' +
      "  --champion-share F    share of the budget for the champion phase's final trainings (default 0.5)\n" +
      "  --cold-start          final trainings start from fresh weights, not the search's (champion.warmStart false)\n" +
      "  --no-held-back-check  the champion phase trains the search's champion alone (champion.selectionShare 0)\n" +
      '  --no-reference-row    skip training the reference network with the whole budget\n' +
      '  --reference-only      train the reference row alone (no search runs)\n' +
      "  --min-epochs N        epochs of successive halving's lowest rung (default: from the training split's size)\n" +
      '  --max-epochs N        epochs of its top rung (default: 9 × the lowest)\n' +
      "  --promote-reference   the reference network climbs every rung of successive halving (search.promoteReference)\n" +
      "  --parents R           how asha-evolution ranks parents: first-rung or highest-rung (search.parents; default: the run file's)\n" +
      "  --population N        the evolving methods' population (search.populationSize; default 8, the run file's); tournaments of 3, or N when smaller\n" +
      "  --keep                keep the data directory (the runs' store and datasets) and print its path\n" +
      '  --quick               a smoke run: small data, 1 seed, tiny budget\n',
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
const share = args['champion-share'] === undefined ? 0.5 : Number(args['champion-share']);
if (!(share > 0 && share < 1)) throw new RangeError(`--champion-share must lie strictly between 0 and 1, got ${args['champion-share']}`);
const settings = {
  seeds: whole('seeds', args.seeds, QUICK ? 1 : 5, 1),
  budget: args.budget === undefined ? undefined : whole('budget', args.budget, 0, 1),
  workers: whole('workers', args.workers, 2, 1),
  tasks: (args.tasks?.split(',') ?? (QUICK ? ['tiles'] : [...TASK_NAMES])) as TaskName[],
  methods: (args.methods?.split(',') ?? [DEFAULT_METHOD, 'random']) as SearchAlgorithmName[],
  championShare: share,
  warmStart: args['cold-start'] !== true,
  heldBackCheck: args['no-held-back-check'] !== true,
  referenceRow: args['no-reference-row'] !== true,
  referenceOnly: args['reference-only'] === true,
  minEpochs: args['min-epochs'] === undefined ? undefined : whole('min-epochs', args['min-epochs'], 1, 1),
  maxEpochs: args['max-epochs'] === undefined ? undefined : whole('max-epochs', args['max-epochs'], 1, 1),
  promoteReference: args['promote-reference'] === true,
  parents: args.parents as ParentRanking | undefined,
  population: args.population === undefined ? undefined : whole('population', args.population, 8, 2),
};
if (settings.parents !== undefined && !PARENT_RANKINGS.includes(settings.parents)) throw new RangeError(`--parents must be one of ${PARENT_RANKINGS.join(', ')}, got ${settings.parents}`);
for (const m of settings.methods) if (!METHODS.includes(m)) throw new RangeError(`unknown method '${m}'; use some of ${METHODS.join(', ')}`);
for (const t of settings.tasks) if (!TASK_NAMES.includes(t)) throw new RangeError(`unknown task '${t}'; use some of ${TASK_NAMES.join(', ')}`);

const log = (line: string) => process.stderr.write(`[bench:search ${new Date().toISOString().slice(11, 19)}] ${line}\n`);
const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

/** The run being driven and its recorded search results, in record order, fed by the coordinator's events. */
class RunWatch {
  runId: string | null = null;
  results: SpentEvaluation[] = [];
  trainCount = 0;
  /** The trained models of the champion phase's final trainings, by candidate key (for the pair-average diagnostic). */
  finalModels = new Map<number, ModelArtifactsMessage>();

  onResult(ev: EvaluationRecord, result: EvaluationResult): void {
    if (ev.runId !== this.runId) return;
    if (ev.kind === 'champion' && result.model) this.finalModels.set(ev.seq, result.model);
    if (ev.kind !== 'search') return;
    this.results.push({ evaluationId: ev.id, samples: newSamples(result, this.trainCount), valAccuracy: result.valAccuracy! });
  }

  reset(runId: string, trainCount: number): void {
    this.runId = runId;
    this.results = [];
    this.trainCount = trainCount;
    this.finalModels = new Map();
  }
}

async function runOnce(coordinator: Coordinator, watch: RunWatch, task: BenchTask, method: SearchAlgorithmName, seed: number): Promise<RunOutcome> {
  const started = Date.now();
  const searchBudget = Math.round(task.budget * (1 - settings.championShare));
  // The champion phase trains the search's champion and, when the run has one, its reference
  // network (for the held-back check, and for the report's comparison in any case): every final
  // training counts, so each gets half.
  const fromTask = task.runConfig(method, seed, searchBudget, task.budget - searchBudget);
  const searchFlags = {
    ...(settings.minEpochs === undefined ? {} : { minEpochs: settings.minEpochs }),
    ...(settings.maxEpochs === undefined ? {} : { maxEpochs: settings.maxEpochs }),
    ...(settings.promoteReference ? { promoteReference: true } : {}),
    ...(settings.parents === undefined ? {} : { parents: settings.parents }),
    ...(settings.population === undefined ? {} : { populationSize: settings.population, sampleSize: Math.min(fromTask.search.sampleSize, settings.population) }),
  };
  const asked = { ...fromTask, search: { ...fromTask.search, ...searchFlags } };
  const config = settings.heldBackCheck ? asked : { ...asked, champion: { ...asked.champion, selectionShare: 0 } };
  const perFinalTraining = Math.floor((task.budget - searchBudget) / (config.search.reference === false ? 1 : 2));
  const run = await coordinator.startRun({ ...config, champion: { ...config.champion, maxSamples: perFinalTraining, warmStart: settings.warmStart } });
  watch.reset(run.id, run.dataset.manifest.trainCount);
  const store = coordinator.store;
  const deadline = started + 90 * 60_000;
  for (;;) {
    const state = store.getRun(run.id)!.state;
    if (state === 'finished' || state === 'failed' || state === 'stopped') break;
    if (Date.now() > deadline) throw new Error(`run ${run.id} (${task.name}, ${method}, seed ${seed}) did not finish within 90 minutes; is a worker stuck?`);
    await sleep(500);
  }
  const final = store.getRun(run.id)!;
  const counted = countedWithin(watch.results, searchBudget);
  const champion = store.getChampion(run.id);
  const evaluations = store.evaluations(run.id);
  const failed = evaluations.filter((e) => e.kind === 'search' && e.state === 'failed');
  const discarded = failed.filter((e) => e.error === DISCARDED_AT_FINISH).length;
  // Everything the champion phase trained: the champion's final training and the reference
  // network's (the held-back check's other side, or the report's comparison), failed attempts' work aside.
  const championPhaseSamples = evaluations.filter((e) => e.kind === 'champion' && e.state === 'done').reduce((s, e) => s + (e.result?.samplesSeen ?? 0), 0);
  const comparison = referenceComparison(store, run.id);
  return {
    task: task.name,
    method,
    seed,
    runId: run.id,
    state: final.state,
    searchSamples: counted.reduce((s, e) => s + e.samples, 0),
    championSamples: championPhaseSamples,
    evaluations: counted.length,
    largestEvaluation: Math.max(0, ...counted.map((e) => e.samples)),
    discardedAtFinish: discarded,
    recordedAfterBudget: watch.results.length - counted.length,
    failedEvaluations: failed.length - discarded,
    curve: budgetCurve(watch.results, searchBudget, FRACTIONS),
    championTestError: champion ? 1 - champion.testAccuracy : null,
    championParams: champion ? champion.result.paramCount : null,
    championWithinBudget: champion ? counted.some((e) => e.evaluationId === champion.sourceEvaluationId) : null,
    championIsReference: comparison.state === 'scored' ? comparison.championIsReference : null,
    inRunReferenceTestError: comparison.referenceTestAccuracy === null ? null : 1 - comparison.referenceTestAccuracy,
    verdict: comparison.line,
    pairAverageTestError: await pairAverageTestError(store, final, watch.finalModels),
    heldBackSides: heldBackSides(store, run.id),
    wallSeconds: (Date.now() - started) / 1000,
  };
}

/**
 * Diagnostic for a route not in the product: the test error the run would have had, had it
 * exported the average of its held-back check's two final trainings (search's champion and
 * reference network, softmax outputs averaged). Null when the run had no such pair.
 */
async function pairAverageTestError(store: RunStore, run: RunRecord, models: ReadonlyMap<number, ModelArtifactsMessage>): Promise<number | null> {
  const pair = heldBackPair(store.events(run.id, 'champion-candidates').at(-1)?.detail.candidates ?? []);
  const a = pair && models.get(pair.champion.seq);
  const b = pair && models.get(pair.reference.seq);
  if (!a || !b || run.dataset.manifest.target) return null;
  const test = decodeShard(await readFile(run.dataset.testPath)).train;
  return 1 - (await scoreEnsemble([a, b], test, run.dataset.manifest.numClasses)).accuracy;
}

const heldBackLine = (sides: RunOutcome['heldBackSides']): string => {
  if (!sides) return '';
  const one = (s: HeldBackSide) => `${s.heldBackAccuracy === null ? '?' : pct(s.heldBackAccuracy)} held back, ${s.testError === null ? '?' : pct(s.testError)} test error`;
  return `, check: search's champion ${one(sides.search)}; reference ${one(sides.reference)}`;
};

/** Both sides of the run's held-back check as it compared them, with their test errors (diagnostic), or null without a check. */
function heldBackSides(store: RunStore, runId: string): RunOutcome['heldBackSides'] {
  const check = store.events(runId, 'champion-held-back-check').at(-1)?.detail;
  if (!check) return null;
  const scored = store.events(runId, 'champion-candidate-scored').map((e) => e.detail);
  const side = (s: { evaluationId: string; valAccuracy: number | null }) => {
    const test = scored.find((d) => d.evaluationId === s.evaluationId)?.testAccuracy;
    return { heldBackAccuracy: s.valAccuracy, testError: test === undefined ? null : 1 - test };
  };
  return { search: side(check.champion), reference: side(check.reference) };
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

const pct = (v: number) => `${(100 * v).toFixed(2)}%`;

async function main(): Promise<void> {
  const began = Date.now();
  const redisUrl = process.env.REDIS_URL ?? 'redis://127.0.0.1:6379';
  const dataDir = await mkdtemp(join(tmpdir(), 'nb-bench-search-'));
  const prefix = `nbbench-search-${randomBytes(4).toString('hex')}`;
  const watch = new RunWatch();
  // A pass for each finished job at once (passDelayMs 0), so the finish at the budget gives up
  // what is in flight as early as it can.
  const coordinator = await Coordinator.start(
    { dataDir, port: 0, host: '127.0.0.1', tickMs: 250, passDelayMs: 0, queue: { redisUrl, prefix, queueName: 'evaluations' }, logger: createLogger('coordinator', process.env.NETBREEDER_LOG_LEVEL ?? 'warn') },
    { resultRecorded: (ev, result) => watch.onResult(ev, result) },
  );
  let workers: ChildProcess[] = [];
  try {
    if (!settings.referenceOnly) workers = await startWorkers(coordinator, dataDir, prefix, redisUrl);
    const outcomes: RunOutcome[] = [];
    const report: Array<{ task: BenchTask; summary: MethodSummary[]; references: ReferenceOutcome[]; searchBudget: number }> = [];
    const seeds = Array.from({ length: settings.seeds }, (_, i) => i + 1);
    for (const name of settings.tasks) {
      const task = name === 'mnist' ? await mnistTask(dataDir, QUICK, settings.budget) : tilesTask(QUICK, settings.budget);
      const total = settings.methods.length * seeds.length;
      let done = 0;
      // Seeds outermost, so a machine that gets busier during the bench slows every method alike.
      for (const seed of settings.referenceOnly ? [] : seeds) {
        for (const method of settings.methods) {
          const o = await runOnce(coordinator, watch, task, method, seed);
          outcomes.push(o);
          log(
            `${task.name} run ${++done}/${total} ${method} seed ${seed}: ${o.state}, ${o.evaluations} evaluations, search ${o.searchSamples} + champion ${o.championSamples} samples, ` +
              `best val ${(100 * o.curve.at(-1)!.bestValAccuracy).toFixed(2)}%, champion test error ${o.championTestError === null ? 'none' : pct(o.championTestError)}` +
              `${o.championIsReference ? ' (the reference itself)' : ''}${o.pairAverageTestError === null ? '' : `, pair average ${pct(o.pairAverageTestError)}`}${heldBackLine(o.heldBackSides)}, ${o.wallSeconds.toFixed(0)} s`,
          );
        }
      }
      // The reference row trains on the task's split, which any run of the task holds; with
      // --reference-only a run is created for it and stopped at once (no worker trains it).
      const first = settings.referenceOnly
        ? await coordinator.startRun(task.runConfig(DEFAULT_METHOD, 1, task.budget, task.budget)).then((r) => coordinator.manager.control(r.id, 'stop').then(() => r))
        : coordinator.store.getRun(outcomes.find((o) => o.task === task.name)!.runId)!;
      const references = settings.referenceRow ? await referenceRows(first, seeds, task.budget, settings.workers, log) : [];
      const summary = summarize(task.name, settings.methods, outcomes, references, FRACTIONS);
      const searchBudget = Math.round(task.budget * (1 - settings.championShare));
      report.push({ task, summary, references, searchBudget });
    }
    const wallSeconds = (Date.now() - began) / 1000;
    const lines: string[] = [];
    for (const r of report) lines.push(...taskTable(r.task.title, r.task.budget, r.searchBudget, r.summary, r.references, FRACTIONS));
    lines.push('');
    const start = settings.warmStart ? "starting from the weights its search training ended with" : 'from fresh weights';
    lines.push(
      settings.heldBackCheck
        ? `Champion: chosen on validation evidence (the test split chooses nothing), then the held-back check: it and the reference network are trained again on train + validation less half of validation, each capped at half the champion phase's share of the budget (both counted), ${start}; the better of the two on the held-back half is exported and scored once on test.`
        : `Champion: chosen on validation evidence (the test split chooses nothing), trained again on train + validation, ${start}, scored once on test; the reference network is trained again the same way for the report's comparison; each of the two final trainings capped at half the champion phase's share of the budget, both counted.`,
    );
    lines.push('Reference row: the run\'s reference network (docs/reference-networks.md) trained once on the training split with the whole budget, the weights of its best epoch by validation accuracy kept, scored once on test.');
    if (settings.tasks.includes('mnist')) {
      lines.push('Published MNIST test errors (LeCun, Bottou, Bengio, Haffner, Proc. IEEE 1998, results table), trained on 60,000 digits:');
      for (const r of LECUN_1998) lines.push(`  ${r.model}: ${r.testErrorPct}%`);
      lines.push('Not directly comparable: these runs train on 3,000 digits (20× fewer) and test on 1,800 digits of the package, not the official 10,000-digit test set.');
    }
    lines.push(`Wall time: ${(wallSeconds / 60).toFixed(1)} min (depends on machine load; the budget does not).`, '');
    process.stdout.write(`${lines.join('\n')}\n`);
    const json = {
      bench: 'search',
      unit: 'training samples seen',
      seeds: settings.seeds,
      workers: settings.workers,
      championShare: settings.championShare,
      warmStart: settings.warmStart,
      heldBackCheck: settings.heldBackCheck,
      ...(settings.population === undefined ? {} : { populationSize: settings.population }),
      defaultMethod: DEFAULT_METHOD,
      tasks: Object.fromEntries(
        report.map((r) => [
          r.task.name,
          {
            title: r.task.title,
            budget: r.task.budget,
            searchBudget: r.searchBudget,
            methods: Object.fromEntries(r.summary.map((s) => [s.method, s])),
            referenceRow: r.references,
          },
        ]),
      ),
      runs: outcomes,
      published: { source: 'LeCun, Bottou, Bengio, Haffner, Proc. IEEE 86(11), 1998, results table', trainDigits: 60_000, results: LECUN_1998 },
      wallSeconds,
    };
    process.stdout.write(`${JSON.stringify(json)}\n`);
  } finally {
    for (const w of workers) if (w.exitCode === null) w.kill('SIGTERM');
    await Promise.all(workers.map((w) => (w.exitCode !== null ? undefined : Promise.race([new Promise((r) => w.once('exit', r)), sleep(10_000).then(() => w.kill('SIGKILL'))]))));
    await coordinator.queue.obliterate().catch(() => undefined);
    await coordinator.close();
    if (args.keep) log(`kept the runs' store and datasets in ${dataDir}`);
    else await rm(dataDir, { recursive: true, force: true });
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
