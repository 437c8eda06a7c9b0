/** `netbreeder run FILE`: a whole run on this machine in one command. */
import { join, resolve } from 'node:path';
import { parseArgs } from 'node:util';
import { DEFAULT_QUEUE_LOCATION } from '@netbreeder/worker';
import { readRunConfigFile } from '../config/run-config.js';
import { createLogger } from '../logger.js';
import { prepareRun } from '../run/prepare-run.js';
import { describeSearchMethod } from '../search/rung-epochs.js';
import { ensureRedis } from './local-redis.js';
import { defaultLocalWorkers, runLocally } from './local-run.js';
import { NetbreederError } from '@netbreeder/shared-types';

export const RUN_HELP = `netbreeder run: a whole run on this machine, from a run file to an exported champion.

Usage: netbreeder run FILE [--workers N] [--redis URL] [--data-dir DIR]

Checks the run file and its data, starts a coordinator and N local workers (default one per core),
shows a live progress line, trains and scores the champion, prints a summary and exits.
Uses the Redis at --redis (default $REDIS_URL or ${DEFAULT_QUEUE_LOCATION.redisUrl}); when nothing
answers there and redis-server is installed, starts a private one that keeps nothing on disk and
stops it at the end. Store and export go to DIR (default ./netbreeder-runs/<time>).

Examples:
  netbreeder run examples/kiln-run.json
  netbreeder run examples/tiles-run.json --workers 2
`;

export async function runCommand(argv: string[]): Promise<number> {
  const { values, positionals } = parseArgs({
    args: argv,
    allowPositionals: true,
    options: { workers: { type: 'string' }, redis: { type: 'string' }, 'data-dir': { type: 'string' }, help: { type: 'boolean', short: 'h' } },
  });
  if (values.help) return void process.stdout.write(RUN_HELP), 0;
  if (positionals.length !== 1) throw new NetbreederError('NB_BAD_USAGE', 'run needs exactly one run file: netbreeder run FILE (see netbreeder run --help)');
  const workers = values.workers === undefined ? defaultLocalWorkers() : Number(values.workers);
  if (!Number.isInteger(workers) || workers < 1 || workers > 64) throw new NetbreederError('NB_BAD_USAGE', `--workers must be a whole number from 1 to 64, got '${values.workers}'`);
  const file = positionals[0]!;
  // The run file and its data are checked before anything starts or is written.
  const prepared = await prepareRun(await readRunConfigFile(file), createLogger('coordinator', process.env.NETBREEDER_LOG_LEVEL ?? 'warn'));
  const redis = await ensureRedis(values.redis ?? process.env.REDIS_URL ?? DEFAULT_QUEUE_LOCATION.redisUrl);
  const dataDir = resolve(values['data-dir'] ?? join('netbreeder-runs', new Date().toISOString().replace(/[:.]/g, '-')));
  try {
    return await runLocally({
      prepared,
      workers,
      redisUrl: redis.url,
      dataDir,
      out: process.stdout,
      intro: (url) =>
        `netbreeder run ${file} · "${prepared.config.name}" · coordinator ${url} · Redis ${redis.url}${redis.private ? ' (private, stopped at the end)' : ''}\n` +
        `search: ${describeSearchMethod(prepared.config.search)} with ${workers} local worker(s) · budget ${prepared.config.budget.maxEvaluations} evaluations / ${prepared.config.budget.maxMinutes} min\n` +
        `store and export: ${dataDir}\n\n`,
    });
  } finally {
    await redis.stop();
  }
}
