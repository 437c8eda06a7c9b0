/**
 * Child process of `npm run bench:scale`: either a fleet of simulated workers (real agents, real
 * queue, real HTTP; simulated training) or, for the raw ceiling, plain BullMQ workers with a no-op
 * processor. Talks to the benchmark over IPC: 'ready' once started; on 'report' it answers with its
 * counters and the percentiles of the waits since the last 'reset'; on 'stop' it stops and exits.
 */
import { Worker } from 'bullmq';
import { pino } from 'pino';
import { SimulatedFleet, openRedis, resolveWorkerOptions, type SimulationSettings } from '@netbreeder/worker';

export interface FleetChildConfig {
  mode: 'simulated' | 'raw';
  count: number;
  redisUrl: string;
  prefix: string;
  queueName: string;
  coordinatorUrl?: string;
  joinToken?: string;
  cacheDir?: string;
  simulation?: SimulationSettings;
}

export type FleetChildMessage =
  | { type: 'ready' }
  | { type: 'report'; started: number; dropped: number; agents: number; waits: number; waitP50Ms: number; waitP99Ms: number; rssMb: number; cpuSeconds: number };

const percentile = (sorted: number[], p: number): number => (sorted.length ? sorted[Math.min(sorted.length - 1, Math.floor(p * sorted.length))]! : 0);

async function main(): Promise<void> {
  const config = JSON.parse(process.argv[2]!) as FleetChildConfig;
  const send = (m: FleetChildMessage) => process.send!(m);
  let report: () => FleetChildMessage;
  // This process's CPU since the last 'reset' (or since it started).
  let cpuFrom = process.cpuUsage();
  const cpuSeconds = () => {
    const c = process.cpuUsage(cpuFrom);
    return (c.user + c.system) / 1e6;
  };
  let reset: () => void;
  let stop: () => Promise<void>;
  if (config.mode === 'raw') {
    const workers: Worker[] = [];
    for (let i = 0; i < config.count; i++) {
      const connection = openRedis(config.redisUrl);
      workers.push(new Worker(config.queueName, async () => 'ok', { connection, prefix: config.prefix, concurrency: 1 }));
    }
    await Promise.all(workers.map((w) => w.waitUntilReady()));
    report = () => ({ type: 'report', started: 0, dropped: 0, agents: workers.length, waits: 0, waitP50Ms: 0, waitP99Ms: 0, rssMb: process.memoryUsage.rss() / 2 ** 20, cpuSeconds: cpuSeconds() });
    reset = () => {
      cpuFrom = process.cpuUsage();
    };
    stop = async () => {
      await Promise.all(workers.map((w) => w.close(true)));
    };
  } else {
    const fleet = new SimulatedFleet(
      {
        worker: resolveWorkerOptions({
          coordinatorUrl: config.coordinatorUrl,
          redisUrl: config.redisUrl,
          prefix: config.prefix,
          queueName: config.queueName,
          workerId: 'bench',
          cacheDir: config.cacheDir,
          joinToken: config.joinToken ?? null,
          nice: 0,
        }),
        simulation: config.simulation!,
        count: config.count,
      },
      pino({ level: 'error' }, pino.destination(2)),
    );
    await fleet.start();
    let from = 0;
    report = () => {
      const s = fleet.snapshot();
      const waits = s.waitsMs.slice(from).sort((a, b) => a - b);
      return { type: 'report', started: s.started, dropped: s.dropped, agents: s.agents, waits: waits.length, waitP50Ms: percentile(waits, 0.5), waitP99Ms: percentile(waits, 0.99), rssMb: process.memoryUsage.rss() / 2 ** 20, cpuSeconds: cpuSeconds() };
    };
    reset = () => {
      from = fleet.snapshot().waitsMs.length;
      cpuFrom = process.cpuUsage();
    };
    stop = () => fleet.stop({ force: true });
  }
  process.on('message', (m: { type: string }) => {
    if (m.type === 'report') send(report());
    else if (m.type === 'reset') reset();
    else if (m.type === 'stop') void stop().finally(() => process.exit(0));
  });
  process.on('disconnect', () => process.exit(0));
  send({ type: 'ready' });
}

void main().catch((err: Error) => {
  process.stderr.write(`scale-fleet: ${err.stack ?? err.message}\n`);
  process.exit(1);
});
