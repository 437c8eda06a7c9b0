import { cpus, homedir, hostname, totalmem } from 'node:os';
import { join } from 'node:path';
import { randomBytes } from 'node:crypto';
import { NetbreederError, DEFAULT_WORKER_WATTS } from '@netbreeder/shared-types';

/** How a worker joins a coordinator and how politely it uses the PC it runs on. */
export interface WorkerOptions {
  /** Coordinator base URL (heartbeats, datasets). @default 'http://127.0.0.1:7460' */
  coordinatorUrl: string;
  /** Redis holding the job queue. @default 'redis://127.0.0.1:6379' */
  redisUrl: string;
  /** Redis key prefix; must match the coordinator's. @default 'netbreeder' */
  prefix: string;
  /** Queue name; must match the coordinator's. @default 'evaluations' */
  queueName: string;
  /** Stable id for this worker in status and results. @default `${hostname}-${pid}-${random}` */
  workerId: string;
  /** Folder for cached datasets. @default ~/.cache/netbreeder/datasets (or $XDG_CACHE_HOME) */
  cacheDir: string;
  /** Most megabytes of datasets to cache. @default 2048 */
  cacheMaxMb: number;
  /** Memory the training process may use, in MiB; larger genomes are refused. @default a quarter of RAM, at most 4096 */
  memoryCapMb: number;
  /** Scheduling priority of the training process (0 normal … 19 lowest). @default 10 */
  nice: number;
  /** Milliseconds between heartbeats. @default 5000 */
  heartbeatMs: number;
  /** A job's lock lasts this long unless renewed; a vanished worker's job returns to the queue after it. @default 30000 */
  lockDurationMs: number;
  /** How often this worker checks for stalled jobs of vanished workers. @default 15000 */
  stalledIntervalMs: number;
  /** Local clock time (HH:MM) at which the worker stops taking jobs and exits; null = never. @default null */
  until: string | null;
  /** Token the coordinator gave for joining (heartbeats, datasets). @default $NETBREEDER_JOIN_TOKEN or none */
  joinToken: string | null;
  /**
   * Take jobs only while the PC is otherwise idle: the 1-minute load average per core, less this
   * worker's own training, must stay below this fraction (0..1); null = always take jobs. @default null
   */
  idleLoad: number | null;
  /** How often the idle rule is checked, in milliseconds. @default 15000 */
  idleCheckMs: number;
  /**
   * Watts one busy core of this PC draws above idle, sent with heartbeats for the coordinator's
   * energy estimate (CPU-seconds × watts). @default DEFAULT_WORKER_WATTS (15, an assumption)
   */
  watts: number;
  /** True when `watts` was not given, so the energy estimate rests on the default assumption. Set by {@link resolveWorkerOptions}. */
  wattsAssumed: boolean;
  /**
   * TEST ONLY: a lying worker, for the verification tests. Adds this to every validation accuracy
   * it reports (and shrinks the loss to match). Refused unless the environment variable
   * `NETBREEDER_TEST_MODE` is `1`. @default null (honest)
   */
  testOnlyInflateAccuracy: number | null;
}

/** The environment variable that must be `1` before test-only worker modes (a lying worker) are accepted. */
export const TEST_MODE_ENV = 'NETBREEDER_TEST_MODE';

/** Throws unless test-only modes are allowed in this environment. */
export function assertTestModeAllowed(what: string, env: NodeJS.ProcessEnv = process.env): void {
  if (env[TEST_MODE_ENV] !== '1') throw new NetbreederError('NB_BAD_USAGE', `${what} is a test-only mode (it reports false results); it is refused unless ${TEST_MODE_ENV}=1 is set, which only tests do`);
}

export function defaultCacheDir(): string {
  const base = process.env.XDG_CACHE_HOME || join(homedir(), '.cache');
  return join(base, 'netbreeder', 'datasets');
}

/** Fills in every option not given; the one place defaults are set. */
export function resolveWorkerOptions(given: Partial<WorkerOptions>): WorkerOptions {
  const defined = Object.fromEntries(Object.entries(given).filter(([, v]) => v !== undefined)) as Partial<WorkerOptions>;
  return {
    coordinatorUrl: 'http://127.0.0.1:7460',
    redisUrl: 'redis://127.0.0.1:6379',
    prefix: 'netbreeder',
    queueName: 'evaluations',
    workerId: `${hostname().replace(/[^A-Za-z0-9_.:-]/g, '-')}-${process.pid}-${randomBytes(2).toString('hex')}`,
    cacheDir: defaultCacheDir(),
    cacheMaxMb: 2048,
    memoryCapMb: Math.min(4096, Math.floor(totalmem() / 1024 / 1024 / 4)),
    nice: 10,
    heartbeatMs: 5000,
    lockDurationMs: 30_000,
    stalledIntervalMs: 15_000,
    until: null,
    joinToken: null,
    idleLoad: null,
    idleCheckMs: 15_000,
    watts: DEFAULT_WORKER_WATTS,
    testOnlyInflateAccuracy: null,
    ...defined,
    wattsAssumed: defined.watts === undefined,
  };
}

let cores: number | null = null;
/** This PC's logical cores (read once: `os.cpus()` reads every core's times, for each heartbeat). */
export const coreCount = (): number => (cores ??= cpus().length);
