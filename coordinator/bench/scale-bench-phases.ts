/** The measured phases of `npm run bench:scale` (scale-bench.ts): raw BullMQ, the queue protocol alone, end to end, and the store's growth. */
import { cpSync } from 'node:fs';
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { basename, join } from 'node:path';
import Database from 'better-sqlite3';
import { Queue } from 'bullmq';
import { EVALUATION_JOB_VERSION, createRandom, defaultSearchSpace, genomeHash, type EvaluationJob } from '@netbreeder/shared-types';
import { openRedis, type SimulationSettings } from '@netbreeder/worker';
import { EvaluationQueue } from '../src/queue/evaluation-queue.js';
import { minimalGenome } from '../src/search/index.js';
import { type Coordinator } from '../src/coordinator.js';
import { createLogger } from '../src/logger.js';
import { prefillFinishedEvaluations } from '../src/store/prefill.js';
import { Fleet, QUEUE, REDIS_URL, cpuSplit, obliterate, percentile, prefix, redisCpuSeconds, round, runConfig, sleep, startCoordinator, statusTimes, window } from './scale-bench-support.js';

// ---- 1. raw BullMQ ------------------------------------------------------------------------------

export async function rawBullmq(workers: number, jobs: number) {
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
export async function queueProtocol(workers: number, warmupMs: number, measureMs: number) {
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

export async function endToEnd(name: string, workers: number, simulation: SimulationSettings, warmupMs: number, measureMs: number) {
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
  return {
    workers,
    aliveWorkers: alive,
    fleetStartSeconds: round(fleetStartSeconds),
    ...shown,
    cpuPerEvaluation,
    waitP50Ms: round(f.waitP50Ms, 0),
    waitP99Ms: round(f.waitP99Ms, 0),
    waits: f.waits,
    fleetRssMb: round(f.rssMb, 0),
    storeEvaluations: size.evaluations,
    storeKbPerEvaluation: round(size.bytes / 1024 / size.evaluations, 1),
  };
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
export async function storeGrowth(sizes: number[], warmupResults: number, measureMs: number) {
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
