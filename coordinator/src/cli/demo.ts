import { join, resolve } from 'node:path';
import { defaultSearchSpace } from '@netbreeder/shared-types';
import { describeSearchMethod } from '../search/rung-epochs.js';
import { parseRunConfig } from '../config/run-config.js';
import { createLogger } from '../logger.js';
import { prepareRun } from '../run/prepare-run.js';
import { runLocally, defaultLocalWorkers } from './local-run.js';

export interface DemoOptions {
  /** Minutes of search before the champion is trained. @default 2.2 (about 3 minutes in all on 2 cores) */
  minutes: number;
  /** Local worker processes. @default one per core */
  workers: number;
  redisUrl: string;
  /** Folder for the demo's store and exports. @default ./netbreeder-demo/<time> */
  dataDir?: string;
  /** Seed of the search and the data. @default 1 */
  seed: number;
  out: NodeJS.WritableStream;
}

/**
 * The demo: a coordinator and local workers evolve a network for the invented glaze-line tile data
 * (16×16 grayscale crops: clean, crack, chip, glaze spot), then train, score and export the champion.
 * The same path as `netbreeder run` ({@link runLocally}).
 */
export async function runDemo(opts: DemoOptions): Promise<number> {
  const dataDir = resolve(opts.dataDir ?? join('netbreeder-demo', new Date().toISOString().replace(/[:.]/g, '-')));
  const config = parseRunConfig({
    name: 'demo: glaze-line tiles',
    seed: opts.seed,
    dataset: { kind: 'demo-tiles', samplesPerClass: 300, seed: opts.seed },
    // The run file's default search (asynchronous successive halving with evolution), as a user gets it.
    budget: { maxEvaluations: 10_000, maxMinutes: opts.minutes },
    evaluation: { maxSeconds: 25 },
    champion: { epochs: 12, maxSeconds: 120 },
    // The default space, with evaluations kept short enough that a 2-core demo sees dozens of them.
    searchSpace: { ...defaultSearchSpace(), epochs: { min: 2, max: 8 } },
  });
  const prepared = await prepareRun(config, createLogger('coordinator', process.env.NETBREEDER_LOG_LEVEL ?? 'warn'));
  return runLocally({
    prepared,
    workers: opts.workers,
    redisUrl: opts.redisUrl,
    dataDir,
    out: opts.out,
    intro: (url, prefix) =>
      `netbreeder demo · coordinator ${url} · Redis ${opts.redisUrl} (prefix ${prefix})\n` +
      `data: invented glaze-line tiles, 4 classes × 300 · search: ${describeSearchMethod(prepared.config.search)} for ${opts.minutes} min with ${opts.workers} local worker(s)\n` +
      `store and exports: ${dataDir}\n\n`,
  });
}

export const defaultDemoWorkers = defaultLocalWorkers;
