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
import { cpus } from 'node:os';
import { parseArgs } from 'node:util';
import { type cpuSplit, round } from './scale-bench-support.js';
import { endToEnd, queueProtocol, rawBullmq, storeGrowth } from './scale-bench-phases.js';

const { values: args } = parseArgs({ options: { quick: { type: 'boolean' }, only: { type: 'string' }, sizes: { type: 'string' } } });
const QUICK = args.quick === true;
const PHASES = ['raw', 'protocol', 'zero', 'thousand', 'store'] as const;
/** `--only zero,store`: run just those phases (for profiling one of them). */
const ONLY = new Set(args.only ? args.only.split(',') : PHASES);
for (const p of ONLY) if (!(PHASES as readonly string[]).includes(p)) throw new Error(`--only takes ${PHASES.join(', ')}; got '${p}'`);
/** `--sizes 10000,100000`: the store sizes of phase 4. */
const SIZES = args.sizes ? args.sizes.split(',').map(Number) : QUICK ? [10_000, 100_000] : [10_000, 100_000, 1_000_000];

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
