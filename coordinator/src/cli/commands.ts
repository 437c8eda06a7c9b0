/** The `netbreeder` command's sub-commands: init, run, coordinator, worker, demo, status, export, … */
import { parseArgs } from 'node:util';
import { runWorkerCli, takeLogFormatOption, DEFAULT_QUEUE_LOCATION } from '@netbreeder/worker';
import { NetbreederError, statusResponseValidator } from '@netbreeder/shared-types';
import { Coordinator, COORDINATOR_VERSION, DEFAULT_PORT } from '../coordinator.js';
import { buildStatus } from '../run/status-report.js';
import { runSummary } from './run-summary.js';
import type { RunRecord } from '../store/run-store.js';
import { readRunConfigFile } from '../config/run-config.js';
import { prepareRun } from '../run/prepare-run.js';
import { createLogger } from '../logger.js';
import { runDemo, defaultDemoWorkers } from './demo.js';
import { statusTable } from './format.js';
import { downloadChampion, requestEnsembleAndWait } from './export-command.js';
import { replayCommand } from './replay-command.js';
import { pickCommand } from './pick-command.js';
import { predictCommand } from './predict-command.js';
import { runCommand } from './run-command.js';
import { initCommand } from './init-command.js';
import { CoordinatorClient } from './coordinator-client.js';

export const HELP = `netbreeder: evolve a small neural network for your data on the spare CPUs of an office.

Commands:
  init DATA     look at a CSV table or image folder and write a run file for it
  run FILE      a whole run on this machine: coordinator, local workers, summary, export
  coordinator   run the coordinator (store, queue, HTTP API) and drive a run
  worker        join a coordinator and train candidates on this PC
  demo          evolve a network for invented demo data on this machine, about 3 minutes
  status        show a coordinator's status
  export        download a run's champion (genome, TensorFlow.js model, report)
  predict       run an exported champion on new data (CSV, images, IDX) and write its predictions
  runs          list the runs a coordinator holds
  replay        re-run a stored run's search and check it decides exactly as recorded
  pick          choose a run's champion yourself (a genome of its front; admin token)
  pause, resume, stop, finish
                control a coordinator's run (needs the admin token)

'netbreeder <command> --help' shows each command's options and examples. Every command takes
--log-format pretty|json (default: readable lines on a terminal, JSON lines otherwise).
`;

const COORDINATOR_HELP = `netbreeder coordinator: keep the population, queue training jobs, record results.

Usage: netbreeder coordinator [--run FILE] [options]

Options:
  --run FILE        start this run (JSON run file) unless the store has an unfinished run,
                    which is resumed instead
  --data-dir DIR    store, datasets and exports           (default ./netbreeder-data)
  --port N          HTTP port                             (default ${DEFAULT_PORT})
  --host ADDR       listen address                        (default 0.0.0.0)
  --redis URL       Redis with the job queue              (default $REDIS_URL or redis://127.0.0.1:6379)
  --prefix NAME     Redis key prefix                      (default netbreeder)
  --join-token T    token workers must present            (default $NETBREEDER_JOIN_TOKEN, else
                    kept in DIR/secrets.json, random on first start)
  --admin-token T   token for run control and export      (default $NETBREEDER_ADMIN_TOKEN, else
                    kept in DIR/secrets.json)
  --private-status  status and dashboard need a token too (default: readable by anyone who can
                    reach the port)
  --lock-ms MS      workers' job lock length; must match theirs          (default 30000)
  --stalled-check-ms MS  how often to look for jobs of vanished workers  (default 15000)
  -h, --help        this text

Examples:
  netbreeder coordinator --run examples/tiles-run.json
  netbreeder coordinator --data-dir /srv/netbreeder --redis redis://127.0.0.1:6379
`;

const DEMO_HELP = `netbreeder demo: a whole search on this machine with invented data.

Usage: netbreeder demo [--minutes M] [--workers N] [--redis URL] [--data-dir DIR] [--seed S]

Starts a coordinator and one local worker per core, evolves a network for 16×16 glaze-line tile
crops (clean, crack, chip, glaze spot) for M minutes (default 2.2), then trains the champion on
train + validation, scores it on the held-out test split and exports it.

Examples:
  netbreeder demo
  netbreeder demo --minutes 10 --workers 2 --seed 7
`;

const STATUS_HELP = `netbreeder status: a compact view of a coordinator's run and workers.

Usage: netbreeder status [--coordinator URL] [--watch] [--token T]

--token (or NETBREEDER_ADMIN_TOKEN / NETBREEDER_JOIN_TOKEN) is needed when the coordinator runs
with --private-status.

Examples:
  netbreeder status --coordinator http://build-server:${DEFAULT_PORT}
  netbreeder status --watch
`;

const EXPORT_HELP = `netbreeder export: download a run's champion into a folder.

Usage: netbreeder export --run ID --out DIR [--ensemble K [--diversity-penalty P]] [--coordinator URL] [--admin-token T]

Writes genome.json, model.json + weights.bin (TensorFlow.js layers model), model.onnx (the same
network as an ONNX graph), preprocessing.json, champion.json, report.md, report.html; and, when the
run file asked for an averaging ensemble (champion.ensemble), its members, ensemble.json and
model.onnx into DIR/ensemble/. --ensemble K asks the coordinator that ran the
finished run for a new averaging ensemble of K accurate, mutually different genomes (the most
accurate first, then each time the best validation accuracy minus P, default 0.05, times its
largest architecture similarity to a member already chosen), waits while they are trained again
and scored on the test split, then exports everything.

Example:
  netbreeder export --coordinator http://build-server:${DEFAULT_PORT} --run r1abc --out ./champion
`;

const redisDefault = () => process.env.REDIS_URL ?? DEFAULT_QUEUE_LOCATION.redisUrl;
const coordinatorDefault = () => process.env.NETBREEDER_COORDINATOR_URL ?? `http://127.0.0.1:${DEFAULT_PORT}`;

function numberOption(name: string, value: string | undefined, min: number, max: number, integer = true): number | undefined {
  if (value === undefined) return undefined;
  const n = Number(value);
  if (!Number.isFinite(n) || (integer && !Number.isInteger(n)) || n < min || n > max) {
    throw new NetbreederError('NB_BAD_USAGE', `--${name} must be ${integer ? 'a whole number' : 'a number'} from ${min} to ${max}, got '${value}'`);
  }
  return n;
}

/** The coordinator command's options (exported so tests can check the deploy files against them). */
export const COORDINATOR_OPTIONS = {
  run: { type: 'string' },
  'data-dir': { type: 'string' },
  port: { type: 'string' },
  host: { type: 'string' },
  redis: { type: 'string' },
  prefix: { type: 'string' },
  'join-token': { type: 'string' },
  'admin-token': { type: 'string' },
  'private-status': { type: 'boolean' },
  'lock-ms': { type: 'string' },
  'stalled-check-ms': { type: 'string' },
  help: { type: 'boolean', short: 'h' },
} as const;

async function coordinatorCommand(argv: string[]): Promise<number> {
  const { values } = parseArgs({ args: argv, options: COORDINATOR_OPTIONS, strict: true });
  if (values.help) return void process.stdout.write(COORDINATOR_HELP), 0;
  const log = createLogger('coordinator');
  // The run file and its data are checked before anything is created on disk or listens.
  const prepared = values.run ? await prepareRun(await readRunConfigFile(values.run), log) : null;
  const startedAt = Date.now();
  let coordinator: Coordinator | null = null;
  coordinator = await Coordinator.start({
    logger: log,
    dataDir: values['data-dir'],
    port: numberOption('port', values.port, 0, 65535),
    host: values.host,
    queue: { ...DEFAULT_QUEUE_LOCATION, redisUrl: values.redis ?? redisDefault(), prefix: values.prefix ?? process.env.NETBREEDER_PREFIX ?? DEFAULT_QUEUE_LOCATION.prefix },
    joinToken: values['join-token'] ?? process.env.NETBREEDER_JOIN_TOKEN,
    adminToken: values['admin-token'] ?? process.env.NETBREEDER_ADMIN_TOKEN,
    publicStatus: !values['private-status'],
    lockDurationMs: numberOption('lock-ms', values['lock-ms'], 1000, 3_600_000),
    stalledIntervalMs: numberOption('stalled-check-ms', values['stalled-check-ms'], 500, 3_600_000),
  }, {
    runFinished: (run) => {
      if (!coordinator) return;
      const summary = runSummary(coordinator, run.id, buildStatus(coordinator.manager, { version: COORDINATOR_VERSION, startedAt }));
      if (summary) process.stdout.write(`\n${summary}`);
    },
  });
  const active = coordinator.store.unfinishedRun();
  if (active) process.stdout.write(`resumed run ${active.id} (${active.state})${prepared ? '; --run ignored until it ends' : ''}\n`);
  else if (prepared) {
    const run = await coordinator.startRun(prepared);
    process.stdout.write(`started run ${run.id}\n${describePreparation(run)}`);
  }
  else process.stdout.write('no run yet: restart with --run FILE to start one\n');
  process.stdout.write(`coordinator listening on ${coordinator.url} · status: ${coordinator.url}/status\n`);
  process.stdout.write(`tokens (join for workers, admin for control and export): ${coordinator.secrets.path}\n`);
  await new Promise<void>((resolve) => {
    const stop = () => resolve();
    process.once('SIGINT', stop);
    process.once('SIGTERM', stop);
  });
  await coordinator.close();
  return 0;
}

/** Class counts per split and the dataset's warnings, as the coordinator recorded them. */
function describePreparation(run: RunRecord): string {
  const m = run.dataset.manifest;
  const prep = run.dataset.preparation;
  const lines = [`dataset ${m.sha256.slice(0, 12)}: ${m.classNames.length} classes, samples of shape [${m.inputShape.join(', ')}]`];
  if (prep) {
    lines.push('  class                     train    val   test');
    m.classNames.forEach((name, i) =>
      lines.push(`  ${name.padEnd(24).slice(0, 24)} ${String(prep.classCounts.train[i]).padStart(6)} ${String(prep.classCounts.val[i]).padStart(6)} ${String(prep.classCounts.test[i]).padStart(6)}`),
    );
    for (const w of prep.warnings) lines.push(`  warning: ${w.message}`);
  } else {
    lines.push(`  ${m.trainCount} training and ${m.valCount} validation samples`);
  }
  return `${lines.join('\n')}\n`;
}

async function statusCommand(argv: string[]): Promise<number> {
  const { values } = parseArgs({ args: argv, options: { coordinator: { type: 'string' }, watch: { type: 'boolean' }, token: { type: 'string' }, help: { type: 'boolean', short: 'h' } } });
  if (values.help) return void process.stdout.write(STATUS_HELP), 0;
  const url = new URL('/status', values.coordinator ?? coordinatorDefault());
  const token = values.token ?? process.env.NETBREEDER_ADMIN_TOKEN ?? process.env.NETBREEDER_JOIN_TOKEN;
  for (;;) {
    const res = await fetch(url, { headers: token ? { authorization: `Bearer ${token}` } : {} }).catch((err: Error) => {
      throw new NetbreederError('NB_COORDINATOR_UNREACHABLE', `cannot reach the coordinator at ${url.origin}: ${err.message}; is it running? (--coordinator URL)`);
    });
    if (!res.ok) throw new NetbreederError('NB_COORDINATOR_REFUSED', `coordinator answered ${res.status}: ${await res.text()}`);
    const status = statusResponseValidator.parse(await res.json());
    const text = statusTable(status);
    process.stdout.write(values.watch && process.stdout.isTTY ? `\x1b[H\x1b[2J${text}\n` : `${text}\n`);
    if (!values.watch) return 0;
    await new Promise((r) => setTimeout(r, 2000));
  }
}

async function exportCommand(argv: string[]): Promise<number> {
  const { values } = parseArgs({
    args: argv,
    options: {
      coordinator: { type: 'string' },
      run: { type: 'string' },
      out: { type: 'string' },
      ensemble: { type: 'string' },
      'diversity-penalty': { type: 'string' },
      'admin-token': { type: 'string' },
      help: { type: 'boolean', short: 'h' },
    },
  });
  if (values.help) return void process.stdout.write(EXPORT_HELP), 0;
  if (!values.run || !values.out) throw new NetbreederError('NB_BAD_USAGE', 'export needs --run ID and --out DIR (see netbreeder export --help)');
  const token = values['admin-token'] ?? process.env.NETBREEDER_ADMIN_TOKEN ?? null;
  const size = numberOption('ensemble', values.ensemble, 2, 10);
  const diversityPenalty = numberOption('diversity-penalty', values['diversity-penalty'], 0, 1, false);
  if (size !== undefined) {
    await requestEnsembleAndWait(values.coordinator ?? coordinatorDefault(), values.run, { size, ...(diversityPenalty === undefined ? {} : { diversityPenalty }) }, token, (a) =>
      process.stdout.write(`training an ensemble of ${a.members.length}: ${a.members.map((m) => `${m.genomeHash.slice(0, 12)} (${m.validation ?? `${(m.valAccuracy * 100).toFixed(1)}%`}, similarity ${m.similarity.toFixed(2)})`).join(', ')}\n`),
    );
  } else if (diversityPenalty !== undefined) throw new NetbreederError('NB_BAD_USAGE', '--diversity-penalty goes with --ensemble K');
  const files = await downloadChampion(values.coordinator ?? coordinatorDefault(), values.run, values.out, token, (name, bytes) =>
    process.stdout.write(`  ${name} (${bytes.toLocaleString('en-US')} bytes)\n`),
  );
  process.stdout.write(`exported ${files.length} files to ${values.out}\n`);
  return 0;
}

async function demoCommand(argv: string[]): Promise<number> {
  const { values } = parseArgs({
    args: argv,
    options: { minutes: { type: 'string' }, workers: { type: 'string' }, redis: { type: 'string' }, 'data-dir': { type: 'string' }, seed: { type: 'string' }, help: { type: 'boolean', short: 'h' } },
  });
  if (values.help) return void process.stdout.write(DEMO_HELP), 0;
  return runDemo({
    minutes: numberOption('minutes', values.minutes, 0.1, 600, false) ?? 2.2,
    workers: numberOption('workers', values.workers, 1, 64) ?? defaultDemoWorkers(),
    redisUrl: values.redis ?? redisDefault(),
    dataDir: values['data-dir'],
    seed: numberOption('seed', values.seed, 0, 4294967295) ?? 1,
    out: process.stdout,
  });
}

const CONTROL_HELP = `netbreeder pause | resume | stop | finish: control a coordinator's run.

Usage: netbreeder pause --run ID [--coordinator URL] [--admin-token T]

pause queues no new evaluations (queued ones still train and are recorded); resume goes on;
stop ends the run without a champion; finish ends the search now (what is training completes)
and trains, scores and exports the champion, as at the end of the budget. The admin token comes from --admin-token or
NETBREEDER_ADMIN_TOKEN (the coordinator keeps it in its data folder's secrets.json).

Example:
  NETBREEDER_ADMIN_TOKEN=… netbreeder pause --coordinator http://build-server:${DEFAULT_PORT} --run r1abc
`;

function controlCommand(action: 'pause' | 'resume' | 'stop' | 'finish') {
  return async (argv: string[]): Promise<number> => {
    const { values } = parseArgs({ args: argv, options: { coordinator: { type: 'string' }, run: { type: 'string' }, 'admin-token': { type: 'string' }, help: { type: 'boolean', short: 'h' } } });
    if (values.help) return void process.stdout.write(CONTROL_HELP), 0;
    if (!values.run) throw new NetbreederError('NB_BAD_USAGE', `${action} needs --run ID (netbreeder runs lists them)`);
    const client = new CoordinatorClient(values.coordinator ?? coordinatorDefault(), values['admin-token'] ?? process.env.NETBREEDER_ADMIN_TOKEN);
    const reply = await client.control(values.run, action);
    process.stdout.write(`run ${reply.id} is now ${reply.state}\n`);
    return 0;
  };
}

const RUNS_HELP = `netbreeder runs: list the runs a coordinator holds.

Usage: netbreeder runs [--coordinator URL] [--token T]
`;

async function runsCommand(argv: string[]): Promise<number> {
  const { values } = parseArgs({ args: argv, options: { coordinator: { type: 'string' }, token: { type: 'string' }, help: { type: 'boolean', short: 'h' } } });
  if (values.help) return void process.stdout.write(RUNS_HELP), 0;
  const token = values.token ?? process.env.NETBREEDER_ADMIN_TOKEN ?? process.env.NETBREEDER_JOIN_TOKEN;
  const runs = await new CoordinatorClient(values.coordinator ?? coordinatorDefault(), token).runs();
  process.stdout.write(runs.length ? `${runs.map((r) => `${r.id.padEnd(20)} ${r.state.padEnd(18)} ${String(r.proposals).padStart(6)} evaluations  ${r.createdAt}  ${r.name}`).join('\n')}\n` : 'no runs\n');
  return 0;
}

export const COMMANDS: Record<string, (argv: string[]) => Promise<number>> = {
  runs: runsCommand,
  pause: controlCommand('pause'),
  resume: controlCommand('resume'),
  stop: controlCommand('stop'),
  finish: controlCommand('finish'),
  coordinator: coordinatorCommand,
  worker: runWorkerCli,
  demo: demoCommand,
  run: runCommand,
  init: (argv) => initCommand(argv),
  status: statusCommand,
  export: exportCommand,
  replay: (argv) => replayCommand(argv),
  pick: (argv) => pickCommand(argv),
  predict: (argv) => predictCommand(argv),
};

export async function main(given: string[]): Promise<number> {
  const [command, ...rest] = takeLogFormatOption(given);
  if (!command || command === '--help' || command === '-h' || command === 'help') {
    process.stdout.write(HELP);
    return command ? 0 : 2;
  }
  const run = COMMANDS[command];
  if (!run) {
    process.stderr.write(`unknown command '${command}'\n\n${HELP}`);
    return 2;
  }
  return run(rest);
}

