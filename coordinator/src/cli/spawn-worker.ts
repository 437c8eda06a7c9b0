import { spawn, type ChildProcess } from 'node:child_process';
import { createRequire } from 'node:module';
import { dirname, join } from 'node:path';
import { pathToFileURL } from 'node:url';

const require = createRequire(import.meta.url);

/** Node arguments that load TypeScript sources through tsx, whatever process spawns them. */
export function tsxNodeArgs(): string[] {
  return ['--import', pathToFileURL(require.resolve('tsx')).href];
}

/** Path of the worker's command-line entry. */
export const workerCliPath = (): string => join(dirname(require.resolve('@netbreeder/worker')), 'cli.ts');

/** Starts a worker as its own process on this machine (what the demo and the tests do). */
export function spawnWorker(args: string[], opts: { env?: NodeJS.ProcessEnv; logFile?: 'inherit' | 'ignore' | 'pipe' } = {}): ChildProcess {
  return spawn(process.execPath, [...tsxNodeArgs(), workerCliPath(), ...args], {
    env: { ...process.env, ...opts.env },
    stdio: ['ignore', 'ignore', opts.logFile ?? 'pipe'],
  });
}
