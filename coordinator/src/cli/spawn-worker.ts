import { spawn, type ChildProcess } from 'node:child_process';
import { workerCliEntry } from '@netbreeder/worker';

/** Starts a worker as its own process on this machine (what the demo and the tests do), from the same form (source or dist) as the worker package. */
export function spawnWorker(args: string[], opts: { env?: NodeJS.ProcessEnv; logFile?: 'inherit' | 'ignore' | 'pipe' } = {}): ChildProcess {
  const entry = workerCliEntry();
  return spawn(process.execPath, [...entry.execArgv, entry.path, ...args], {
    env: { ...process.env, ...opts.env },
    stdio: ['ignore', 'ignore', opts.logFile ?? 'pipe'],
  });
}
