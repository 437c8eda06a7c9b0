/**
 * `npm run bench:scale`: can one coordinator feed a thousand PCs? Loopback only, bounded (6 to 8
 * minutes on a 2-core PC, 2 to 4 of them writing the pre-filled store). Every phase uses its own
 * random Redis prefix on the same Redis and simulated workers (real agents, queue and HTTP;
 * simulated training) in a child process.
 *
 * 1. raw BullMQ: 20,000 no-op jobs added in bulk and completed by 50 plain BullMQ workers (the ceiling);
 * 2. the project's queue protocol alone with the same no-op workers: jobs added one by one,
 *    finished jobs read back and removed after recording, as the coordinator does, but nothing
 *    stored or searched (how much of the gap the durable protocol costs, how much the rest);
 * 3. the project end to end with zero training time and 50 simulated workers (propose, queue,
 *    complete, record, select the next); the ratio of 3 to 1;
 * 4. 1,000 simulated workers with 10-second mean (log-normal) jobs: evaluations/s, the wait from a
 *    worker being free to having its next job (p50/p99), coordinator CPU and RSS, heartbeats taken,
 *    /status latency and the coordinator's event-loop delay;
 * 5. the store pre-filled with 10,000, 100,000 and 1,000,000 finished evaluations (with every row
 *    a recorded result writes, see `prefillFinishedEvaluations` in src/store/prefill.ts), each size
 *    from a copy of one warmed-up run (see `storeGrowth`): coordinator CPU per recorded result,
 *    evaluations/s, /status latency and the mean size of the genomes evaluated at each size.
 * Phases 1 to 4 split the CPU per job between the coordinator (or the adding process: this one),
 * the workers (the fleet child) and Redis (its INFO cpu). Phases 3 and 5 also show the largest
 * size of the store's write-ahead log (it must stay bounded: checkpoints keep up) and the store's
 * size (phase 3 per evaluation, from real rows).
 *
 * The coordinator runs in this process (its CPU figure includes this script's light polling).
 * Prints a table and, last, one JSON object with every figure.
 *
 *   npm run bench:scale [-- --quick]     (--quick: shorter windows, 100k largest store; a smoke run)
 *   npm run bench:scale -- --only zero,store --sizes 100000   (some phases only, for profiling)
 *   NB_FLEET_PROF=/tmp/prof npm run bench:scale -- --only zero   (also writes the fleet child's CPU profile there)
 *   NB_COORDINATOR_PROF=/tmp/prof npm run bench:scale -- --only store   (a CPU profile of this process over each measured window)
 */
import { fork, type ChildProcess } from 'node:child_process';
import { randomBytes } from 'node:crypto';
import { cpSync, mkdirSync, statSync, writeFileSync } from 'node:fs';
import { mkdtemp, rm } from 'node:fs/promises';
import { cpus, tmpdir } from 'node:os';
import { basename, join } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { createRequire } from 'node:module';
import { parseArgs } from 'node:util';
import { monitorEventLoopDelay } from 'node:perf_hooks';
import { Session } from 'node:inspector/promises';
import Database from 'better-sqlite3';
import { Queue } from 'bullmq';
import { EVALUATION_JOB_VERSION, createRandom, defaultSearchSpace, genomeHash, type EvaluationJob } from '@netbreeder/shared-types';
import { openRedis, type SimulationSettings } from '@netbreeder/worker';
import { EvaluationQueue } from '../src/queue/evaluation-queue.js';
import { minimalGenome } from '../src/search/index.js';
import { Coordinator } from '../src/coordinator.js';
import { createLogger } from '../src/logger.js';
import { parseRunConfig } from '../src/config/run-config.js';
import { prefillFinishedEvaluations } from '../src/store/prefill.js';
import type { FleetChildConfig, FleetChildMessage } from './scale-fleet.js';

const REDIS_URL = process.env.REDIS_URL ?? 'redis://127.0.0.1:6379';
const QUEUE = 'evaluations';
const { values: args } = parseArgs({ options: { quick: { type: 'boolean' }, only: { type: 'string' }, sizes: { type: 'string' } } });
const QUICK = args.quick === true;
const PHASES = ['raw', 'protocol', 'zero', 'thousand', 'store'] as const;
/** `--only zero,store`: run just those phases (for profiling one of them). */
const ONLY = new Set(args.only ? args.only.split(',') : PHASES);
for (const p of ONLY) if (!(PHASES as readonly string[]).includes(p)) throw new Error(`--only takes ${PHASES.join(', ')}; got '${p}'`);
/** `--sizes 10000,100000`: the store sizes of phase 4. */
const SIZES = args.sizes ? args.sizes.split(',').map(Number) : QUICK ? [10_000, 100_000] : [10_000, 100_000, 1_000_000];
const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));
const prefix = (name: string) => `nbbench-${name}-${randomBytes(4).toString('hex')}`;
const round = (v: number, d = 1) => Number(v.toFixed(d));
const percentile = (values: number[], p: number) => {
  const s = [...values].sort((a, b) => a - b);
  return s.length ? s[Math.min(s.length - 1, Math.floor(p * s.length))]! : 0;
};
const TSX_LOADER = pathToFileURL(createRequire(import.meta.url).resolve('tsx')).href;
const FLEET_ENTRY = fileURLToPath(new URL('./scale-fleet.ts', import.meta.url));

/** A fleet child process and its IPC. */
class Fleet {
  private constructor(private readonly child: ChildProcess) {}
  static async start(config: FleetChildConfig): Promise<Fleet> {
    const child = fork(FLEET_ENTRY, [JSON.stringify(config)], { execArgv: ['--import', TSX_LOADER, ...(process.env.NB_FLEET_PROF ? ['--cpu-prof', `--cpu-prof-dir=${process.env.NB_FLEET_PROF}`] : [])], stdio: ['ignore', 'inherit', 'inherit', 'ipc'] });
    await new Promise<void>((resolve, reject) => {
      child.once('message', (m: FleetChildMessage) => (m.type === 'ready' ? resolve() : reject(new Error('fleet did not start'))));
      child.once('exit', (code) => reject(new Error(`fleet child exited with code ${code} before it was ready`)));
    });
    return new Fleet(child);
  }
  reset(): void {
    this.child.send({ type: 'reset' });
  }
  report(): Promise<Extract<FleetChildMessage, { type: 'report' }>> {
    return new Promise((resolve) => {
      this.child.once('message', (m: FleetChildMessage) => resolve(m as Extract<FleetChildMessage, { type: 'report' }>));
      this.child.send({ type: 'report' });
    });
  }
  async stop(): Promise<void> {
    const exited = new Promise<void>((r) => this.child.once('exit', () => r()));
    this.child.send({ type: 'stop' });
    await Promise.race([exited, sleep(20_000).then(() => this.child.kill('SIGKILL'))]);
  }
}

async function startCoordinator(dataDir: string, queuePrefix: string): Promise<Coordinator> {
  return Coordinator.start({ dataDir, port: 0, host: '127.0.0.1', queue: { redisUrl: REDIS_URL, prefix: queuePrefix, queueName: QUEUE }, logger: createLogger('coordinator', 'error') });
}

const runConfig = (maxSeconds: number) =>
  parseRunConfig({
    name: 'scale-bench',
    seed: 1,
    dataset: { kind: 'demo-tiles', samplesPerClass: 20, seed: 1 },
    search: { algorithm: 'aging-evolution', populationSize: 100, sampleSize: 25 },
    budget: { maxEvaluations: 10_000_000, maxMinutes: 600 },
    evaluation: { maxSeconds },
  });

async function obliterate(queuePrefix: string): Promise<void> {
  const connection = openRedis(REDIS_URL);
  const q = new Queue(QUEUE, { connection, prefix: queuePrefix });
  await q.obliterate({ force: true }).catch(() => undefined);
  await q.close();
  connection.disconnect();
}

/** CPU seconds the Redis server has used so far (INFO cpu: main thread and children, user and system). */
async function redisCpuSeconds(): Promise<number> {
  const connection = openRedis(REDIS_URL);
  const info = await connection.info('cpu');
  connection.disconnect();
  const field = (name: string) => Number(new RegExp(`^${name}:([0-9.]+)`, 'm').exec(info)?.[1] ?? NaN);
  return field('used_cpu_user') + field('used_cpu_sys');
}

/** CPU milliseconds per evaluation, split between the coordinator (this process), the workers and Redis. */
function cpuSplit(perEvaluation: number, seconds: { coordinator: number; workers: number; redis: number }) {
  const ms = (v: number) => (perEvaluation ? round((1000 * v) / perEvaluation, 3) : null);
  return { coordinatorMs: ms(seconds.coordinator), workersMs: ms(seconds.workers), redisMs: ms(seconds.redis), totalMs: ms(seconds.coordinator + seconds.workers + seconds.redis) };
}

/** Milliseconds of sequential GET /status, `n` times. */
async function statusTimes(url: string, n: number): Promise<number[]> {
  const out: number[] = [];
  for (let i = 0; i < n; i++) {
    const t = performance.now();
    const res = await fetch(`${url}/status`);
    await res.arrayBuffer();
    out.push(performance.now() - t);
  }
  return out;
}

/** Counts the heartbeats the coordinator takes (the bench wraps the run manager's handler). */
function countHeartbeats(coordinator: Coordinator): () => number {
  const workers = coordinator.manager.workers;
  const record = workers.recordHeartbeat.bind(workers);
  let n = 0;
  workers.recordHeartbeat = (hb) => {
    n++;
    record(hb);
  };
  return () => n;
}

/**
 * With NB_COORDINATOR_PROF=DIR, profiles this process (the coordinator) from now until the returned
 * function is called, which writes DIR/<label>.cpuprofile. Without it, does nothing.
 */
async function profileWindow(label: string): Promise<() => Promise<void>> {
  const dir = process.env.NB_COORDINATOR_PROF;
  if (!dir) return async () => undefined;
  const session = new Session();
  session.connect();
  await session.post('Profiler.enable');
  await session.post('Profiler.start');
  return async () => {
    const { profile } = await session.post('Profiler.stop');
    mkdirSync(dir, { recursive: true });
    writeFileSync(join(dir, `${label}.cpuprofile`), JSON.stringify(profile));
    session.disconnect();
  };
}

/** Bytes of the store's write-ahead log now (0 when there is none). */
const storeLogBytes = (dataDir: string) => {
  try {
    return statSync(join(dataDir, 'store.sqlite-wal')).size;
  } catch {
    return 0;
  }
};

/** Evaluations done, the coordinator's CPU, /status latency and the store's log size over a window of `ms`. */
async function window(coordinator: Coordinator, runId: string, ms: number, statusEveryMs: number, dataDir: string, label: string) {
  const stopProfile = await profileWindow(label);
  const heartbeats = countHeartbeats(coordinator);
  const done0 = coordinator.store.counts(runId).done;
  const redis0 = await redisCpuSeconds();
  // How long the coordinator's event loop was held up (a pass, a big reply): what /status waits on.
  const loop = monitorEventLoopDelay({ resolution: 10 });
  loop.enable();
  const cpu0 = process.cpuUsage();
  const t0 = performance.now();
  const status: number[] = [];
  let peakRss = process.memoryUsage.rss();
  let largestLog = storeLogBytes(dataDir);
  while (performance.now() - t0 < ms) {
    status.push(...(await statusTimes(coordinator.url, 1)));
    peakRss = Math.max(peakRss, process.memoryUsage.rss());
    largestLog = Math.max(largestLog, storeLogBytes(dataDir));
    await sleep(statusEveryMs);
  }
  const seconds = (performance.now() - t0) / 1000;
  const cpu = process.cpuUsage(cpu0);
  loop.disable();
  await stopProfile();
  const redisSeconds = (await redisCpuSeconds()) - redis0;
  const results = coordinator.store.counts(runId).done - done0;
  const cpuSeconds = (cpu.user + cpu.system) / 1e6;
  return {
    cpuSeconds,
    redisSeconds,
    seconds: round(seconds),
    results,
    evaluationsPerSecond: round(results / seconds, 1),
    coordinatorCpuPercent: round((100 * cpuSeconds) / seconds, 0),
    cpuMsPerResult: results ? round((1000 * cpuSeconds) / results, 2) : null,
    rssMb: round(peakRss / 2 ** 20, 0),
    // A log that only grows means checkpoints are not keeping up (reads slow down, the disk fills).
    storeLogMaxMb: round(largestLog / 2 ** 20, 0),
    statusP50Ms: round(percentile(status, 0.5), 1),
    statusP99Ms: round(percentile(status, 0.99), 1),
    heartbeatsPerSecond: round(heartbeats() / seconds, 0),
    eventLoopDelayP99Ms: round(loop.percentile(99) / 1e6, 0),
    eventLoopDelayMaxMs: round(loop.max / 1e6, 0),
  };
}

// ---- 1. raw BullMQ ------------------------------------------------------------------------------

async function rawBullmq(workers: number, jobs: number) {
  const p = prefix('raw');
  const fleet = await Fleet.start({ mode: 'raw', count: workers, redisUrl: REDIS_URL, prefix: p, queueName: QUEUE });
  const connection = openRedis(REDIS_URL);
  const q = new Queue(QUEUE, { connection, prefix: p });
  fleet.reset();
  const redis0 = await redisCpuSeconds();
  const cpu0 = process.cpuUsage();
  const t0 = performance.now();
  for (let i = 0; i < jobs; i += 1000) {
    await q.addBulk(Array.from({ length: Math.min(1000, jobs - i) }, (_, k) => ({ name: 'noop', data: { i: i + k }, opts: { removeOnComplete: false } })));
  }
  for (;;) {
    const { completed } = await q.getJobCounts('completed');
    if (completed! >= jobs) break;
    await sleep(50);
  }
  const seconds = (performance.now() - t0) / 1000;
  const cpu = process.cpuUsage(cpu0);
  const redisSeconds = (await redisCpuSeconds()) - redis0;
  const f = await fleet.report();
  await fleet.stop();
  await q.obliterate({ force: true });
  await q.close();
  connection.disconnect();
  const cpuPerJob = cpuSplit(jobs, { coordinator: (cpu.user + cpu.system) / 1e6, workers: f.cpuSeconds, redis: redisSeconds });
  return { workers, jobs, seconds: round(seconds, 2), jobsPerSecond: round(jobs / seconds, 0), cpuPerJob };
}

// ---- 1b. the project's queue protocol alone ------------------------------------------------------

/** A job as big as the search's: a real genome and dataset manifest (the no-op workers ignore it). */
function protocolJob(seq: number): EvaluationJob {
  const data = { inputShape: [16, 16, 1], numClasses: 4 };
  const genome = minimalGenome({ space: defaultSearchSpace(), data, rng: createRandom(seq) });
  return {
    schemaVersion: EVALUATION_JOB_VERSION,
    kind: 'search',
    evaluationId: `protocol-s${seq}-a1`,
    runId: 'protocol',
    attempt: 1,
    genome,
    genomeHash: genomeHash(genome),
    seed: seq,
    budget: { epochs: genome.training.epochs, maxSeconds: 60 },
    dataset: { sha256: '0'.repeat(64), bytes: 1, ...data, classNames: ['a', 'b', 'c', 'd'], trainCount: 60, valCount: 10 },
  };
}

/**
 * The coordinator's queue work and nothing else, with `workers` no-op BullMQ workers: one job in
 * flight per worker plus slack, each added on its own; a pass (on every finished-job event, and
 * every second) reads the finished jobs back, removes them and adds as many new ones. No store, no
 * search, no HTTP: the ceiling the durable protocol leaves the coordinator.
 */
async function queueProtocol(workers: number, warmupMs: number, measureMs: number) {
  const p = prefix('protocol');
  const fleet = await Fleet.start({ mode: 'raw', count: workers, redisUrl: REDIS_URL, prefix: p, queueName: QUEUE });
  const queue = new EvaluationQueue({ redisUrl: REDIS_URL, prefix: p, queueName: QUEUE }, createLogger('bench', 'error'));
  let seq = 0;
  let done = 0;
  let ticking: Promise<void> | null = null;
  let again = false;
  const pass = async () => {
    const finished = await queue.finished();
    await queue.removeMany(finished.map((j) => j.id));
    done += finished.length;
    await queue.addMany(finished.map(() => protocolJob(seq++)));
  };
  const tick = () => {
    if (ticking) {
      again = true;
      return;
    }
    ticking = (async () => {
      do {
        again = false;
        await pass();
      } while (again);
    })().finally(() => {
      ticking = null;
    });
  };
  await queue.watch(tick);
  const timer = setInterval(tick, 1000);
  await queue.addMany(Array.from({ length: workers + 2 }, () => protocolJob(seq++)));
  await sleep(warmupMs);
  fleet.reset();
  const done0 = done;
  const redis0 = await redisCpuSeconds();
  const cpu0 = process.cpuUsage();
  const t0 = performance.now();
  await sleep(measureMs);
  const seconds = (performance.now() - t0) / 1000;
  const cpu = process.cpuUsage(cpu0);
  const redisSeconds = (await redisCpuSeconds()) - redis0;
  const results = done - done0;
  const f = await fleet.report();
  clearInterval(timer);
  await ticking;
  await fleet.stop();
  await queue.obliterate();
  await queue.close();
  const cpuPerJob = cpuSplit(results, { coordinator: (cpu.user + cpu.system) / 1e6, workers: f.cpuSeconds, redis: redisSeconds });
  return { workers, seconds: round(seconds), jobs: results, jobsPerSecond: round(results / seconds, 0), cpuPerJob };
}

// ---- 2. and 3. the project end to end ------------------------------------------------------------

async function endToEnd(name: string, workers: number, simulation: SimulationSettings, warmupMs: number, measureMs: number) {
  const dataDir = await mkdtemp(join(tmpdir(), `nb-bench-${name}-`));
  const p = prefix(name);
  const coordinator = await startCoordinator(dataDir, p);
  const fleetStartedAt = performance.now();
  const fleet = await Fleet.start({ mode: 'simulated', count: workers, redisUrl: REDIS_URL, prefix: p, queueName: QUEUE, coordinatorUrl: coordinator.url, joinToken: coordinator.secrets.joinToken, cacheDir: join(dataDir, 'cache'), simulation });
  const fleetStartSeconds = (performance.now() - fleetStartedAt) / 1000;
  const run = await coordinator.startRun(runConfig(Math.max(60, simulation.meanSeconds * 10)));
  await sleep(warmupMs);
  fleet.reset();
  const figures = await window(coordinator, run.id, measureMs, 1000, dataDir, name);
  const f = await fleet.report();
  const alive = coordinator.manager.workers.aliveCount();
  await coordinator.manager.control(run.id, 'stop').catch(() => undefined);
  await fleet.stop();
  await coordinator.close();
  const size = storeSize(dataDir);
  await obliterate(p);
  await rm(dataDir, { recursive: true, force: true });
  const { cpuSeconds, redisSeconds, ...shown } = figures;
  const cpuPerEvaluation = cpuSplit(figures.results, { coordinator: cpuSeconds, workers: f.cpuSeconds, redis: redisSeconds });
  return { workers, aliveWorkers: alive, fleetStartSeconds: round(fleetStartSeconds), ...shown, cpuPerEvaluation, waitP50Ms: round(f.waitP50Ms, 0), waitP99Ms: round(f.waitP99Ms, 0), waits: f.waits, fleetRssMb: round(f.rssMb, 0), storeEvaluations: size.evaluations, storeKbPerEvaluation: round(size.bytes / 1024 / size.evaluations, 1) };
}

// ---- 4. a store holding many finished evaluations ---------------------------------------------

/** The store's size (its file after a full checkpoint, free pages left out) in bytes, and its evaluations. */
function storeSize(dataDir: string): { bytes: number; evaluations: number } {
  const db = new Database(join(dataDir, 'store.sqlite'));
  db.pragma('wal_checkpoint(TRUNCATE)');
  const pages = (db.pragma('page_count', { simple: true }) as number) - (db.pragma('freelist_count', { simple: true }) as number);
  const bytes = pages * (db.pragma('page_size', { simple: true }) as number);
  const evaluations = (db.prepare('SELECT COUNT(*) AS n FROM evaluations').get() as { n: number }).n;
  db.close();
  return { bytes, evaluations };
}

/**
 * Copies a closed coordinator's data folder: its files as they are, its store through SQLite's
 * backup (the closed store's checkpoint thread may still be ending, and may delete the write-ahead
 * log while a plain file copy walks the folder).
 */
async function copyDataDir(from: string, to: string): Promise<void> {
  cpSync(from, to, { recursive: true, filter: (src) => !basename(src).startsWith('store.sqlite') });
  const db = new Database(join(from, 'store.sqlite'));
  await db.backup(join(to, 'store.sqlite'));
  db.close();
}

/** Mean node count of the genomes of the search evaluations of `runId` that finished since `since`: how big the genomes being worked on were. */
function meanGenomeNodes(dataDir: string, runId: string, since: number): number {
  const db = new Database(join(dataDir, 'store.sqlite'), { readonly: true });
  const row = db
    .prepare(`SELECT AVG(json_array_length(job_json, '$.genome.nodes')) AS n FROM evaluations INDEXED BY evaluations_by_run_finished WHERE run_id = ? AND finished_at >= ? AND kind = 'search' AND state = 'done'`)
    .get(runId, since) as { n: number | null };
  db.close();
  return round(row.n ?? 0, 1);
}

/**
 * The cost per result as the store grows, with nothing else changing: one run is first searched
 * for `warmupResults` real results (its genomes grow as it evolves, and bigger genomes cost more
 * to mutate, check and store), then each size starts from a copy of that same store, pre-filled
 * to the size, on a Redis prefix of its own (the queue is rebuilt from the store, as after a lost
 * Redis). Measuring the sizes one after another on one continuing run would charge the genomes'
 * growth to the store.
 */
async function storeGrowth(sizes: number[], warmupResults: number, measureMs: number) {
  const root = await mkdtemp(join(tmpdir(), 'nb-bench-store-'));
  const template = join(root, 'template');
  const simulation: SimulationSettings = { meanSeconds: 0, sigma: 0, dropRate: 0, seed: 'store' };
  const prefixes = [prefix('store-warmup')];
  const startFleet = (c: Coordinator, queuePrefix: string) =>
    Fleet.start({ mode: 'simulated', count: 50, redisUrl: REDIS_URL, prefix: queuePrefix, queueName: QUEUE, coordinatorUrl: c.url, joinToken: c.secrets.joinToken, cacheDir: join(root, 'cache'), simulation });
  let coordinator = await startCoordinator(template, prefixes[0]!);
  const run = await coordinator.startRun(runConfig(60));
  let fleet = await startFleet(coordinator, prefixes[0]!);
  while (coordinator.store.counts(run.id).done < warmupResults) await sleep(250);
  await fleet.stop();
  await coordinator.close();
  const rows: Array<Record<string, number | null>> = [];
  for (const size of sizes) {
    const dataDir = join(root, `size-${size}`);
    await copyDataDir(template, dataDir);
    const insertStartedAt = performance.now();
    prefillFinishedEvaluations(join(dataDir, 'store.sqlite'), run.id, size);
    const insertSeconds = (performance.now() - insertStartedAt) / 1000;
    const queuePrefix = prefix('store');
    prefixes.push(queuePrefix);
    coordinator = await startCoordinator(dataDir, queuePrefix);
    const finishedInStore = coordinator.store.counts(run.id).done;
    fleet = await startFleet(coordinator, queuePrefix);
    await sleep(3000);
    const windowStart = Date.now();
    const figures = await window(coordinator, run.id, measureMs, 200, dataDir, `store-${size}`);
    // Idle: the workers gone and the last pass over, so this is the cost of /status itself at this size.
    await fleet.stop();
    await sleep(1000);
    const direct = await statusTimes(coordinator.url, 50);
    await coordinator.close();
    const { cpuSeconds: _cpu, redisSeconds: _redis, ...shown } = figures;
    const storeMb = round(storeSize(dataDir).bytes / 2 ** 20, 0);
    rows.push({ prefilled: size, finishedInStore, insertSeconds: round(insertSeconds, 1), ...shown, meanGenomeNodes: meanGenomeNodes(dataDir, run.id, windowStart), statusIdleP50Ms: round(percentile(direct, 0.5), 1), storeMb });
    await rm(dataDir, { recursive: true, force: true });
  }
  for (const p of prefixes) await obliterate(p);
  await rm(root, { recursive: true, force: true });
  return rows;
}

// ---- main ---------------------------------------------------------------------------------------

async function main(): Promise<void> {
  const startedAt = performance.now();
  const machine = `${cpus().length} cores, ${cpus()[0]?.model ?? 'unknown CPU'}, Node ${process.version}`;
  console.log(`netbreeder scale benchmark on ${machine}${QUICK ? ' (quick)' : ''}`);

  const raw = ONLY.has('raw') ? await rawBullmq(50, QUICK ? 5000 : 20_000) : null;
  if (raw) console.log(`raw BullMQ, 50 workers, ${raw.jobs} no-op jobs: ${raw.jobsPerSecond} jobs/s`);

  const protocol = ONLY.has('protocol') ? await queueProtocol(50, 3000, QUICK ? 8000 : 15_000) : null;
  if (protocol) console.log(`queue protocol alone, 50 no-op workers: ${protocol.jobsPerSecond} jobs/s${raw ? ` (${round((100 * protocol.jobsPerSecond) / raw.jobsPerSecond, 0)}% of raw)` : ''}`);

  const zero = ONLY.has('zero') ? await endToEnd('zero', 50, { meanSeconds: 0, sigma: 0, dropRate: 0, seed: 'zero' }, 5000, QUICK ? 10_000 : 25_000) : null;
  const ratio = raw && zero ? zero.evaluationsPerSecond / raw.jobsPerSecond : null;
  if (zero) console.log(`project end to end, 50 simulated workers, zero training: ${zero.evaluationsPerSecond} evaluations/s${ratio === null ? '' : ` (${round(100 * ratio, 0)}% of raw)`}`);

  const thousand = ONLY.has('thousand') ? await endToEnd('thousand', 1000, { meanSeconds: 10, sigma: 0.5, dropRate: 0, seed: 'thousand' }, QUICK ? 15_000 : 25_000, QUICK ? 20_000 : 60_000) : null;
  if (thousand) console.log(`1,000 simulated workers, 10 s mean jobs: ${thousand.evaluationsPerSecond} evaluations/s`);

  const growth = ONLY.has('store') ? await storeGrowth(SIZES, QUICK ? 5000 : 15_000, QUICK ? 8000 : 15_000) : [];

  const table: string[] = [];
  const line = (a: string, b: string) => table.push(`${a.padEnd(68)} ${b}`);
  line('figure', 'value');
  line('-'.repeat(68), '-'.repeat(30));
  const split = (c: ReturnType<typeof cpuSplit>) => `${c.coordinatorMs} / ${c.workersMs} / ${c.redisMs} (total ${c.totalMs})`;
  if (raw) {
    line('raw BullMQ no-op jobs/s (50 workers, bulk add)', `${raw.jobsPerSecond}`);
    line('  CPU ms per job: adder / workers / Redis', split(raw.cpuPerJob));
  }
  if (protocol) {
    line('queue protocol alone, jobs/s (50 no-op workers)', `${protocol.jobsPerSecond}${raw ? ` (${round((100 * protocol.jobsPerSecond) / raw.jobsPerSecond, 0)}% of raw)` : ''}`);
    line('  CPU ms per job: coordinator / workers / Redis', split(protocol.cpuPerJob));
  }
  if (zero) {
    line('project evaluations/s, zero training (50 workers)', `${zero.evaluationsPerSecond}`);
    if (ratio !== null) line('ratio project / raw', `${round(100 * ratio, 0)}%`);
    line('  CPU ms per evaluation: coordinator / workers / Redis', split(zero.cpuPerEvaluation));
    line('  store write-ahead log, largest MB', `${zero.storeLogMaxMb}`);
    line('  store size per evaluation KB (real rows)', `${zero.storeKbPerEvaluation} (${zero.storeEvaluations} evaluations)`);
  }
  if (thousand) {
    line('1,000 workers, 10 s jobs: evaluations/s', `${thousand.evaluationsPerSecond} (ideal ${round(thousand.workers / 10, 0)})`);
    line('  workers alive (by heartbeat)', `${thousand.aliveWorkers}`);
    line('  wait free → next job p50 / p99 ms', `${thousand.waitP50Ms} / ${thousand.waitP99Ms} (${thousand.waits} jobs)`);
    line('  coordinator CPU % of one core / RSS MB', `${thousand.coordinatorCpuPercent} / ${thousand.rssMb}`);
    line('  heartbeats taken per second', `${thousand.heartbeatsPerSecond}`);
    line('  /status p50 / p99 ms', `${thousand.statusP50Ms} / ${thousand.statusP99Ms}`);
    line('  coordinator event-loop delay p99 / max ms', `${thousand.eventLoopDelayP99Ms} / ${thousand.eventLoopDelayMaxMs}`);
    line('  fleet start (1,000 agents) s / fleet RSS MB', `${thousand.fleetStartSeconds} / ${thousand.fleetRssMb}`);
  }
  for (const g of growth) {
    line(`store with ${g.finishedInStore!.toLocaleString('en')} finished (${g.prefilled!.toLocaleString('en')} pre-filled): evaluations/s`, `${g.evaluationsPerSecond}`);
    line('  CPU ms per result / /status p50 (loaded, idle) ms', `${g.cpuMsPerResult} / ${g.statusP50Ms}, ${g.statusIdleP50Ms}`);
    line('  mean nodes of the genomes evaluated', `${g.meanGenomeNodes}`);
    line('  store write-ahead log, largest MB / store MB', `${g.storeLogMaxMb} / ${g.storeMb}`);
  }
  const totalSeconds = round((performance.now() - startedAt) / 1000, 0);
  line('benchmark wall time s', `${totalSeconds}`);
  console.log(table.join('\n'));
  console.log(JSON.stringify({ bench: 'scale', machine, quick: QUICK, rawBullmq: raw, queueProtocol: protocol, endToEndZeroTraining: zero, ratio: ratio === null ? null : round(ratio, 3), thousandWorkers: thousand, storeGrowth: growth, totalSeconds }));
}

void main().then(
  () => process.exit(0),
  (err: Error) => {
    console.error(`bench:scale failed: ${err.stack ?? err.message}`);
    process.exit(1);
  },
);
