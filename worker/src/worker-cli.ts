import { parseArgs } from 'node:util';
import type { Logger } from 'pino';
import { createLogger, takeLogFormatOption } from './log/create-logger.js';
import { WorkerAgent } from './agent/worker-agent.js';
import { assertTestModeAllowed, resolveWorkerOptions, type WorkerOptions } from './agent/worker-options.js';
import { msUntilClockTime } from './agent/stop-time.js';
import { parseSimulateSpec, type SimulationSettings } from './agent/simulated-training.js';
import { SimulatedFleet } from './agent/simulated-fleet.js';
import { NetbreederError } from '@netbreeder/shared-types';

export const WORKER_HELP = `netbreeder worker: join a coordinator and train candidate networks on this PC's CPU.

Usage: netbreeder worker --coordinator URL [--redis URL] [options]
       netbreeder-worker --coordinator URL [--redis URL] [options]   (the worker installed alone)

Options:
  --coordinator URL   coordinator base URL              (default http://127.0.0.1:7460)
  --redis URL         Redis with the job queue           (default $REDIS_URL or redis://127.0.0.1:6379)
  --prefix NAME       Redis key prefix of the search     (default netbreeder)
  --queue NAME        queue name                         (default evaluations)
  --id ID             worker id shown in status          (default host-pid-random)
  --memory-cap MB     memory the training may use        (default a quarter of RAM, at most 4096)
  --nice N            scheduling priority, 0..19         (default 10: yields to the PC's owner)
  --until HH:MM       stop taking jobs at this local time and exit
  --cache-dir DIR     dataset cache folder               (default ~/.cache/netbreeder/datasets)
  --cache-max-mb MB   dataset cache cap                  (default 2048)
  --join-token T      the coordinator's join token       (default $NETBREEDER_JOIN_TOKEN)
  --idle-load F       take jobs only while the PC's own load per core is below F (0..1),
                      for example 0.3; checked every 15 s
  --lock-ms MS        job lock length; a vanished worker's job returns after it (default 30000)
  --stalled-check-ms MS  how often this worker looks for stalled jobs   (default 15000)
  --log-format F      pretty (readable) or json lines     (default pretty on a terminal, else json)
  --watts W           watts one busy core of this PC draws, for the coordinator's energy
                      estimate (default 15: an assumption, shown as such)
  -h, --help          this text

Test and benchmark only (nothing is trained; results are synthetic and worthless for a real search):
  --simulate lognormal:MEAN_S:SIGMA  take real jobs from the real queue but, instead of training,
                      wait a seeded log-normal time with that mean (seconds) and log spread, then
                      return a synthetic result (backend cpu, accuracy from the genome's size and hash)
  --drop-rate P       with --simulate: abandon each job with probability P (the simulated PC
                      vanishes without reporting; its job's lock lapses and it is reissued)
  --simulate-count N  with --simulate: run N simulated workers in this one process, each with its
                      own queue worker, Redis connection, id (ID-s0 … ID-sN-1) and heartbeats (default 1)
  --simulate-seed S   with --simulate: seed of the drawn times and drops (default simulate)
  --test-only-inflate-accuracy D  a lying worker for the verification tests: trains for real but
                      reports validation accuracy + D; refused unless NETBREEDER_TEST_MODE=1

Stop: Ctrl-C (or SIGTERM) finishes the current job, then exits; a second Ctrl-C abandons it (the
coordinator hands it to another worker).

Examples:
  netbreeder worker --coordinator http://build-server:7460 --redis redis://build-server:6379
  netbreeder worker --coordinator http://10.0.0.5:7460 --until 07:30 --memory-cap 2048 --idle-load 0.3
`;

const WORKER_ARGS = {
  coordinator: { type: 'string' },
  redis: { type: 'string' },
  prefix: { type: 'string' },
  queue: { type: 'string' },
  id: { type: 'string' },
  'memory-cap': { type: 'string' },
  nice: { type: 'string' },
  until: { type: 'string' },
  'cache-dir': { type: 'string' },
  'cache-max-mb': { type: 'string' },
  'join-token': { type: 'string' },
  'idle-load': { type: 'string' },
  'lock-ms': { type: 'string' },
  'stalled-check-ms': { type: 'string' },
  simulate: { type: 'string' },
  'drop-rate': { type: 'string' },
  'simulate-count': { type: 'string' },
  'simulate-seed': { type: 'string' },
  watts: { type: 'string' },
  'test-only-inflate-accuracy': { type: 'string' },
  help: { type: 'boolean', short: 'h' },
} as const;

/** The simulated-worker settings of `netbreeder worker` (test and benchmark only), or null without `--simulate`. */
export function parseSimulationArgs(argv: string[]): (SimulationSettings & { count: number }) | null {
  const { values } = parseArgs({ args: argv, options: WORKER_ARGS, strict: true });
  const extras = (['drop-rate', 'simulate-count', 'simulate-seed'] as const).filter((k) => values[k] !== undefined);
  if (values.simulate === undefined) {
    if (extras.length) throw new NetbreederError('NB_BAD_USAGE', `--${extras[0]} needs --simulate lognormal:MEAN_S:SIGMA (simulated workers are for tests and benchmarks only)`);
    return null;
  }
  const dropRate = values['drop-rate'] === undefined ? 0 : Number(values['drop-rate']);
  if (!Number.isFinite(dropRate) || dropRate < 0 || dropRate >= 1) throw new NetbreederError('NB_BAD_USAGE', `--drop-rate must be a number from 0 up to (not including) 1, got '${values['drop-rate']}'`);
  const count = values['simulate-count'] === undefined ? 1 : Number(values['simulate-count']);
  if (!Number.isInteger(count) || count < 1 || count > 5000) throw new NetbreederError('NB_BAD_USAGE', `--simulate-count must be a whole number from 1 to 5000, got '${values['simulate-count']}'`);
  return { ...parseSimulateSpec(values.simulate), dropRate, count, seed: values['simulate-seed'] ?? 'simulate' };
}

/** Parses `netbreeder worker` arguments into complete options ('help' when help was asked for). */
export function parseWorkerArgs(argv: string[], env: NodeJS.ProcessEnv = process.env): WorkerOptions | 'help' {
  const { values } = parseArgs({ args: argv, options: WORKER_ARGS, strict: true });
  if (values.help) return 'help';
  const int = (name: string, v: string | undefined, min: number, max: number): number | undefined => {
    if (v === undefined) return undefined;
    const n = Number(v);
    if (!Number.isInteger(n) || n < min || n > max) throw new NetbreederError('NB_BAD_USAGE', `--${name} must be a whole number from ${min} to ${max}, got '${v}'`);
    return n;
  };
  if (values.until) msUntilClockTime(values.until, new Date()); // rejects a malformed time now
  return resolveWorkerOptions({
    coordinatorUrl: values.coordinator ?? env.NETBREEDER_COORDINATOR_URL,
    redisUrl: values.redis ?? env.REDIS_URL,
    prefix: values.prefix ?? env.NETBREEDER_PREFIX,
    queueName: values.queue,
    workerId: values.id,
    memoryCapMb: int('memory-cap', values['memory-cap'], 64, 1_048_576),
    nice: int('nice', values.nice, 0, 19),
    until: values.until ?? null,
    cacheDir: values['cache-dir'],
    cacheMaxMb: int('cache-max-mb', values['cache-max-mb'], 1, 1_048_576),
    joinToken: values['join-token'] ?? env.NETBREEDER_JOIN_TOKEN ?? null,
    idleLoad: fraction('idle-load', values['idle-load']),
    lockDurationMs: int('lock-ms', values['lock-ms'], 1000, 3_600_000),
    stalledIntervalMs: int('stalled-check-ms', values['stalled-check-ms'], 500, 3_600_000),
    watts: positive('watts', values.watts, 10_000),
    testOnlyInflateAccuracy: inflation(values['test-only-inflate-accuracy'], env),
  });
}

function positive(name: string, v: string | undefined, max: number): number | undefined {
  if (v === undefined) return undefined;
  const n = Number(v);
  if (!Number.isFinite(n) || n <= 0 || n > max) throw new NetbreederError('NB_BAD_USAGE', `--${name} must be a number above 0 and at most ${max}, got '${v}'`);
  return n;
}

/** The lying worker's inflation (test only): refused outside tests. */
function inflation(v: string | undefined, env: NodeJS.ProcessEnv): number | null {
  if (v === undefined) return null;
  assertTestModeAllowed('--test-only-inflate-accuracy', env);
  const n = Number(v);
  if (!Number.isFinite(n) || n <= 0 || n > 1) throw new NetbreederError('NB_BAD_USAGE', `--test-only-inflate-accuracy must be a number above 0 and at most 1, got '${v}'`);
  return n;
}

function fraction(name: string, v: string | undefined): number | null {
  if (v === undefined) return null;
  const n = Number(v);
  if (!Number.isFinite(n) || n <= 0 || n > 1) throw new NetbreederError('NB_BAD_USAGE', `--${name} must be a number above 0 and at most 1, got '${v}'`);
  return n;
}

/** Runs `netbreeder worker …` until the worker stops; returns the process exit code. */
export async function runWorkerCli(given: string[]): Promise<number> {
  const argv = takeLogFormatOption(given);
  const options = parseWorkerArgs(argv);
  if (options === 'help') {
    process.stdout.write(WORKER_HELP);
    return 0;
  }
  const log = createLogger({ component: 'worker', workerId: options.workerId });
  const simulation = parseSimulationArgs(argv);
  if (simulation) return runSimulatedFleet(options, simulation, log);
  const agent = new WorkerAgent(options, log);
  let signals = 0;
  const onSignal = (signal: string) => {
    signals++;
    log.info({ signal }, signals === 1 ? 'stop requested: finishing the current job' : 'second stop request: abandoning the current job');
    void agent.stop({ force: signals > 1 });
  };
  process.on('SIGINT', onSignal);
  process.on('SIGTERM', onSignal);
  await agent.start();
  await agent.stopped;
  if (agent.fatal) throw new NetbreederError('NB_COORDINATOR_REFUSED', agent.fatal);
  return 0;
}

/** Runs `--simulate` workers until a signal (test and benchmark only). Prints one JSON line of fleet stats to stdout when stopped. */
async function runSimulatedFleet(options: WorkerOptions, simulation: SimulationSettings & { count: number }, log: Logger): Promise<number> {
  const fleet = new SimulatedFleet({ worker: options, simulation, count: simulation.count }, log);
  const stopped = new Promise<void>((resolve) => {
    process.once('SIGINT', () => resolve());
    process.once('SIGTERM', () => resolve());
  });
  await fleet.start();
  await stopped;
  await fleet.stop({ force: true }); // simulated jobs in flight are abandoned, as by a vanished PC
  const stats = fleet.snapshot();
  process.stdout.write(`${JSON.stringify({ simulatedFleet: { ...stats, waitsMs: undefined, waits: stats.waitsMs.length } })}\n`);
  return 0;
}
