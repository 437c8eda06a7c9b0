import { spawn, type ChildProcess } from 'node:child_process';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { sourceNodeArgs } from '@netbreeder/worker';
import { waitFor } from './harness.js';

const root = join(import.meta.dirname, '..', '..', '..');

/** A free TCP port on the loopback interface (the one `netbreeder run` takes for a private Redis). */
export { freeLoopbackPort as freePort } from '@netbreeder/coordinator';

/** A process with its stderr kept for failure messages. */
export interface Managed {
  child: ChildProcess;
  log: string[];
  exited: Promise<number | null>;
}

function manage(child: ChildProcess, name: string): Managed {
  const log: string[] = [];
  const keep = (chunk: Buffer) => {
    log.push(`[${name}] ${chunk.toString()}`);
    if (log.length > 500) log.shift();
  };
  child.stdout?.on('data', keep);
  child.stderr?.on('data', keep);
  const exited = new Promise<number | null>((resolve) => child.once('exit', (code) => resolve(code)));
  return { child, log, exited };
}

/** Runs the `netbreeder` CLI as its own process (as a user would), from the repository root. */
export function spawnCli(args: string[], env: NodeJS.ProcessEnv = {}, name = 'cli'): Managed {
  const child = spawn(process.execPath, [...sourceNodeArgs(), join(root, 'coordinator/src/cli/main.ts'), ...args], {
    cwd: root,
    env: { ...process.env, NETBREEDER_LOG_LEVEL: 'info', ...env },
    stdio: ['ignore', 'pipe', 'pipe'],
  });
  return manage(child, name);
}

/** A coordinator process on `port`, waiting until its HTTP API answers. */
export async function startCoordinatorProcess(opts: {
  port: number;
  dataDir: string;
  prefix: string;
  redisUrl: string;
  runFile?: string;
  tokens: { join: string; admin: string };
  lockMs: number;
  stalledCheckMs: number;
}): Promise<Managed> {
  const args = ['coordinator', '--port', String(opts.port), '--host', '127.0.0.1', '--data-dir', opts.dataDir, '--prefix', opts.prefix, '--redis', opts.redisUrl];
  args.push('--join-token', opts.tokens.join, '--admin-token', opts.tokens.admin, '--lock-ms', String(opts.lockMs), '--stalled-check-ms', String(opts.stalledCheckMs));
  if (opts.runFile) args.push('--run', opts.runFile);
  const p = spawnCli(args, {}, 'coordinator');
  await waitFor(
    'the coordinator to answer',
    async () => {
      if (p.child.exitCode !== null) throw new Error(`coordinator exited with ${p.child.exitCode}:\n${p.log.join('')}`);
      return fetch(`http://127.0.0.1:${opts.port}/health`).then((r) => r.ok, () => false);
    },
    60_000,
    200,
  );
  return p;
}

/** A throwaway Redis (Debian's redis-server) on its own port, keeping nothing on disk. */
export async function startRedisServer(port: number): Promise<Managed> {
  const child = spawn('redis-server', ['--port', String(port), '--bind', '127.0.0.1', '--save', '', '--appendonly', 'no', '--dir', '/tmp'], { stdio: ['ignore', 'pipe', 'pipe'] });
  const p = manage(child, 'redis');
  await waitFor('redis-server to accept connections', () => p.log.join('').includes('Ready to accept connections'), 20_000, 100);
  return p;
}

/** CPU seconds a process has used so far (user + system, from /proc). */
export function cpuSeconds(pid: number): number {
  const fields = readFileSync(`/proc/${pid}/stat`, 'utf8').split(') ')[1]!.split(' ');
  const ticks = Number(fields[11]) + Number(fields[12]); // utime, stime
  return ticks / 100;
}

/** Ids of a process's children (from /proc), e.g. a worker's training child. */
export function childPids(pid: number): number[] {
  try {
    return readFileSync(`/proc/${pid}/task/${pid}/children`, 'utf8').trim().split(/\s+/).filter(Boolean).map(Number);
  } catch {
    return [];
  }
}

/** Sends `signal` to a process and all of its descendants. */
export function signalTree(pid: number, signal: NodeJS.Signals): void {
  for (const c of childPids(pid)) signalTree(c, signal);
  try {
    process.kill(pid, signal);
  } catch {
    /* already gone */
  }
}
