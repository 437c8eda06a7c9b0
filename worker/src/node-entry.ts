import { createRequire } from 'node:module';
import { fileURLToPath, pathToFileURL } from 'node:url';

/**
 * How to start one of our entry files as a Node process. Installed, the packages run their
 * compiled JavaScript (`dist/`) with plain node; in a checkout, tests and the npm scripts run the
 * TypeScript sources through tsx, and a child must then do the same: load tsx and resolve our
 * packages by their `source` export condition (to `src/`, not to a possibly stale or absent `dist/`).
 */
export interface NodeEntry {
  /** Node's own arguments (before the file). */
  execArgv: string[];
  /** Absolute path of the file to run. */
  path: string;
}

/** Whether the module at `moduleUrl` runs from TypeScript source (a checkout) rather than from `dist/`. */
const runsFromSource = (moduleUrl: string): boolean => moduleUrl.endsWith('.ts');

/** Node arguments that run TypeScript sources: the tsx loader (a development dependency) and the `source` condition. */
export function sourceNodeArgs(): string[] {
  const tsx = createRequire(import.meta.url).resolve('tsx');
  return ['--import', pathToFileURL(tsx).href, '--conditions=source'];
}

/** The entry `stem` (a path without extension, relative to the module at `moduleUrl`) in the form that module runs in. */
export function nodeEntry(moduleUrl: string, stem: string): NodeEntry {
  const fromSource = runsFromSource(moduleUrl);
  return {
    execArgv: fromSource ? sourceNodeArgs() : [],
    path: fileURLToPath(new URL(`${stem}.${fromSource ? 'ts' : 'js'}`, moduleUrl)),
  };
}

/** The worker's command-line entry (`cli.ts` or `dist/cli.js`), for starting workers on this machine. */
export const workerCliEntry = (): NodeEntry => nodeEntry(import.meta.url, './cli');
