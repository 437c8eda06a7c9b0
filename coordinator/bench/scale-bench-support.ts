/** Shared pieces of `npm run bench:scale` (scale-bench.ts): the fleet child, the coordinator, Redis CPU, /status timing and the measuring window. */
import { fork, type ChildProcess } from 'node:child_process';
import { randomBytes } from 'node:crypto';
import { mkdirSync, statSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { monitorEventLoopDelay } from 'node:perf_hooks';
import { Session } from 'node:inspector/promises';
import { Queue } from 'bullmq';
import { openRedis, sourceNodeArgs } from '@netbreeder/worker';
import { Coordinator } from '../src/coordinator.js';
import { createLogger } from '../src/logger.js';
import { parseRunConfig } from '../src/config/run-config.js';
import type { FleetChildConfig, FleetChildMessage } from './scale-fleet.js';

export const REDIS_URL = process.env.REDIS_URL ?? 'redis://127.0.0.1:6379';
export const QUEUE = 'evaluations';
export const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));
export const prefix = (name: string) => `nbbench-${name}-${randomBytes(4).toString('hex')}`;
export const round = (v: number, d = 1) => Number(v.toFixed(d));
export const percentile = (values: number[], p: number) => {
  const s = [...values].sort((a, b) => a - b);
  return s.length ? s[Math.min(s.length - 1, Math.floor(p * s.length))]! : 0;
};
export const FLEET_ENTRY = fileURLToPath(new URL('./scale-fleet.ts', import.meta.url));

/** A fleet child process and its IPC. */
export class Fleet {
  private constructor(private readonly child: ChildProcess) {}
  static async start(config: FleetChildConfig): Promise<Fleet> {
    const child = fork(FLEET_ENTRY, [JSON.stringify(config)], { execArgv: [...sourceNodeArgs(), ...(process.env.NB_FLEET_PROF ? ['--cpu-prof', `--cpu-prof-dir=${process.env.NB_FLEET_PROF}`] : [])], stdio: ['ignore', 'inherit', 'inherit', 'ipc'] });
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

export async function startCoordinator(dataDir: string, queuePrefix: string): Promise<Coordinator> {
  return Coordinator.start({ dataDir, port: 0, host: '127.0.0.1', queue: { redisUrl: REDIS_URL, prefix: queuePrefix, queueName: QUEUE }, logger: createLogger('coordinator', 'error') });
}

export const runConfig = (maxSeconds: number) =>
  parseRunConfig({
    name: 'scale-bench',
    seed: 1,
    dataset: { kind: 'demo-tiles', samplesPerClass: 20, seed: 1 },
    search: { algorithm: 'aging-evolution', populationSize: 100, sampleSize: 25 },
    budget: { maxEvaluations: 10_000_000, maxMinutes: 600 },
    evaluation: { maxSeconds },
  });

export async function obliterate(queuePrefix: string): Promise<void> {
  const connection = openRedis(REDIS_URL);
  const q = new Queue(QUEUE, { connection, prefix: queuePrefix });
  await q.obliterate({ force: true }).catch(() => undefined);
  await q.close();
  connection.disconnect();
}

/** CPU seconds the Redis server has used so far (INFO cpu: main thread and children, user and system). */
export async function redisCpuSeconds(): Promise<number> {
  const connection = openRedis(REDIS_URL);
  const info = await connection.info('cpu');
  connection.disconnect();
  const field = (name: string) => Number(new RegExp(`^${name}:([0-9.]+)`, 'm').exec(info)?.[1] ?? NaN);
  return field('used_cpu_user') + field('used_cpu_sys');
}

/** CPU milliseconds per evaluation, split between the coordinator (this process), the workers and Redis. */
export function cpuSplit(perEvaluation: number, seconds: { coordinator: number; workers: number; redis: number }) {
  const ms = (v: number) => (perEvaluation ? round((1000 * v) / perEvaluation, 3) : null);
  return { coordinatorMs: ms(seconds.coordinator), workersMs: ms(seconds.workers), redisMs: ms(seconds.redis), totalMs: ms(seconds.coordinator + seconds.workers + seconds.redis) };
}

/** Milliseconds of sequential GET /status, `n` times. */
export async function statusTimes(url: string, n: number): Promise<number[]> {
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
export function countHeartbeats(coordinator: Coordinator): () => number {
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
export async function profileWindow(label: string): Promise<() => Promise<void>> {
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
export const storeLogBytes = (dataDir: string) => {
  try {
    return statSync(join(dataDir, 'store.sqlite-wal')).size;
  } catch {
    return 0;
  }
};

/** Evaluations done, the coordinator's CPU, /status latency and the store's log size over a window of `ms`. */
export async function window(coordinator: Coordinator, runId: string, ms: number, statusEveryMs: number, dataDir: string, label: string) {
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
