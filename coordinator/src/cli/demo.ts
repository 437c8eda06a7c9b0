import type { ChildProcess } from 'node:child_process';
import { randomBytes } from 'node:crypto';
import { mkdir } from 'node:fs/promises';
import { cpus } from 'node:os';
import { join, resolve } from 'node:path';
import { defaultSearchSpace, describeGenome, type StatusResponse } from '@netbreeder/shared-types';
import { Coordinator } from '../coordinator.js';
import { parseRunConfig } from '../config/run-config.js';
import { createLogger } from '../logger.js';
import { buildStatus } from '../run/status-report.js';
import { progressLine, pct } from './format.js';
import { spawnWorker } from './spawn-worker.js';

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
 * Uses its own Redis key prefix, so it never touches another search on the same Redis.
 */
export async function runDemo(opts: DemoOptions): Promise<number> {
  const out = opts.out;
  const dataDir = resolve(opts.dataDir ?? join('netbreeder-demo', new Date().toISOString().replace(/[:.]/g, '-')));
  await mkdir(dataDir, { recursive: true });
  const prefix = `netbreeder-demo-${randomBytes(3).toString('hex')}`;
  const log = createLogger('coordinator', process.env.NETBREEDER_LOG_LEVEL ?? 'warn');
  const coordinator = await Coordinator.start({ dataDir, port: 0, host: '127.0.0.1', queue: { redisUrl: opts.redisUrl, prefix, queueName: 'evaluations' }, logger: log });
  const config = parseRunConfig({
    name: 'demo: glaze-line tiles',
    seed: opts.seed,
    dataset: { kind: 'demo-tiles', samplesPerClass: 300, seed: opts.seed },
    search: { algorithm: 'aging-evolution', populationSize: 12, sampleSize: 4 },
    budget: { maxEvaluations: 10_000, maxMinutes: opts.minutes },
    evaluation: { maxSeconds: 25 },
    champion: { epochs: 12, maxSeconds: 120 },
    // The default space, with evaluations kept short enough that a 2-core demo sees dozens of them.
    searchSpace: { ...defaultSearchSpace(), epochs: { min: 2, max: 8 } },
  });
  out.write(`netbreeder demo · coordinator ${coordinator.url} · Redis ${opts.redisUrl} (prefix ${prefix})\n`);
  out.write(`data: invented glaze-line tiles, 4 classes × 300 · search: aging evolution for ${opts.minutes} min with ${opts.workers} local worker(s)\n`);
  out.write(`store and exports: ${dataDir}\n\n`);

  const workers: ChildProcess[] = [];
  for (let i = 0; i < opts.workers; i++) {
    const w = spawnWorker(['--coordinator', coordinator.url, '--redis', opts.redisUrl, '--prefix', prefix, '--id', `demo-worker-${i + 1}`, '--nice', '0', '--cache-dir', join(dataDir, 'worker-cache')], {
      env: { NETBREEDER_LOG_LEVEL: process.env.NETBREEDER_LOG_LEVEL ?? 'warn', NETBREEDER_JOIN_TOKEN: coordinator.secrets.joinToken },
      logFile: 'inherit',
    });
    workers.push(w);
  }
  const run = await coordinator.startRun(config);

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
    const champion = coordinator.store.getChampion(run.id);
    if (!champion) {
      out.write(`\nno champion: ${interrupted ? 'interrupted' : (coordinator.store.getRun(run.id)?.failure ?? 'the run did not finish')}\n`);
      return 1;
    }
    const genome = coordinator.store.getGenome(champion.genomeHash)!;
    const exportDir = join(dataDir, 'runs', run.id, 'champion');
    out.write(`\nChampion after ${final.evaluations.done} evaluations:\n`);
    out.write(`  layers:      ${describeGenome(genome.genome, run.dataset.manifest.numClasses)}\n`);
    out.write(`  parameters:  ${genome.params.toLocaleString('en-US')} · FLOPs/sample ${genome.flops.toLocaleString('en-US')}\n`);
    out.write(`  training:    ${genome.genome.training.optimizer}, learning rate ${genome.genome.training.learningRate}, batch ${genome.genome.training.batchSize}\n`);
    out.write(`  validation:  ${pct(champion.valAccuracy)} (during search)\n`);
    out.write(`  test:        ${pct(champion.testAccuracy)} on ${champion.testPredictions.length} held-out tiles (after final training on train + validation)\n`);
    const reference = final.reference;
    if (reference?.referenceTestAccuracy != null) out.write(`  reference:   ${pct(reference.referenceTestAccuracy)} on the same held-out tiles (the hand-made network, trained the same way)\n`);
    if (reference) out.write(`  ${reference.line}\n`);
    out.write(`  exported to: ${exportDir} (model.json + weights.bin, preprocessing.json, genome.json, report.md, report.html)\n`);
    out.write(`  predict:     netbreeder predict --model ${exportDir} --input FOLDER_OF_16x16_TILE_PNGS\n`);
    return 0;
  } finally {
    process.off('SIGINT', onSigint);
    for (const w of workers) w.kill('SIGTERM');
    await Promise.all(workers.map((w) => new Promise<void>((r) => (w.exitCode !== null ? r() : w.once('exit', () => r())))));
    await coordinator.queue.obliterate().catch(() => undefined);
    await coordinator.close();
  }
}

export const defaultDemoWorkers = (): number => Math.max(1, cpus().length);
