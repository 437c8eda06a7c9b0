import type { ChildProcess } from 'node:child_process';
import { randomBytes } from 'node:crypto';
import { cpus } from 'node:os';
import { join } from 'node:path';
import type { StatusResponse } from '@netbreeder/shared-types';
import { Coordinator } from '../coordinator.js';
import { createLogger } from '../logger.js';
import type { PreparedRun } from '../run/prepare-run.js';
import { buildStatus } from '../run/status-report.js';
import { progressLine } from './format.js';
import { runSummary } from './run-summary.js';
import { spawnWorker } from './spawn-worker.js';

export interface LocalRunOptions {
  /** The run, its data already read and checked. */
  prepared: PreparedRun;
  /** Local worker processes. */
  workers: number;
  redisUrl: string;
  /** Folder for the store and exports (created). */
  dataDir: string;
  out: NodeJS.WritableStream;
  /** Lines printed before the search starts (what runs, on what). */
  intro: (coordinatorUrl: string, prefix: string) => string;
}

/**
 * A whole run on this machine: a coordinator (on a free loopback port, with its own Redis key
 * prefix, so it never touches another search on the same Redis) and local worker processes given
 * its join token; shows a live progress line, then the summary, and stops everything.
 * Returns 0 when the run found a champion. What `netbreeder run` and `netbreeder demo` do.
 */
export async function runLocally(opts: LocalRunOptions): Promise<number> {
  const out = opts.out;
  const prefix = `netbreeder-local-${randomBytes(3).toString('hex')}`;
  const log = createLogger('coordinator', process.env.NETBREEDER_LOG_LEVEL ?? 'warn');
  const coordinator = await Coordinator.start({ dataDir: opts.dataDir, port: 0, host: '127.0.0.1', queue: { redisUrl: opts.redisUrl, prefix, queueName: 'evaluations' }, logger: log });
  out.write(opts.intro(coordinator.url, prefix));

  const workers: ChildProcess[] = [];
  for (let i = 0; i < opts.workers; i++) {
    const w = spawnWorker(['--coordinator', coordinator.url, '--redis', opts.redisUrl, '--prefix', prefix, '--id', `local-worker-${i + 1}`, '--nice', '0', '--cache-dir', join(opts.dataDir, 'worker-cache')], {
      env: { NETBREEDER_LOG_LEVEL: process.env.NETBREEDER_LOG_LEVEL ?? 'warn', NETBREEDER_JOIN_TOKEN: coordinator.secrets.joinToken },
      logFile: 'inherit',
    });
    workers.push(w);
  }
  const run = await coordinator.startRun(opts.prepared);

  const tty = 'isTTY' in out && (out as NodeJS.WriteStream).isTTY;
  let lastPrinted = 0;
  let lastLine = '';
  const show = (status: StatusResponse, force = false) => {
    const line = progressLine(status);
    if (tty) out.write(`\r\x1b[2K${line}`);
    else if ((force && line !== lastLine) || Date.now() - lastPrinted > 10_000) {
      out.write(`${line}\n`);
      lastPrinted = Date.now();
      lastLine = line;
    }
  };
  let interrupted = false;
  const onSigint = () => {
    interrupted = true;
  };
  process.once('SIGINT', onSigint);
  const meta = { version: '0.1.0', startedAt: Date.now() };
  try {
    for (;;) {
      const status = buildStatus(coordinator.manager, meta);
      show(status);
      const state = status.run?.state;
      if (state === 'finished' || state === 'failed' || state === 'stopped' || interrupted) break;
      await new Promise((r) => setTimeout(r, 1000));
    }
    const final = buildStatus(coordinator.manager, meta);
    show(final, true);
    if (tty) out.write('\n');
    const summary = runSummary(coordinator, run.id, final);
    if (!summary) {
      out.write(`\nno champion: ${interrupted ? 'interrupted' : (coordinator.store.getRun(run.id)?.failure ?? 'the run did not finish')}\n`);
      return 1;
    }
    out.write(`\n${summary}`);
    return 0;
  } finally {
    process.off('SIGINT', onSigint);
    for (const w of workers) w.kill('SIGTERM');
    await Promise.all(workers.map((w) => new Promise<void>((r) => (w.exitCode !== null ? r() : w.once('exit', () => r())))));
    await coordinator.queue.obliterate().catch(() => undefined);
    await coordinator.close();
  }
}

export const defaultLocalWorkers = (): number => Math.max(1, cpus().length);
