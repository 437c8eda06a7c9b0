/**
 * The reference row of `npm run bench:search`: the run's reference network (see
 * docs/reference-networks.md), trained once with the task's whole budget on the training split, in
 * a training child process of its own, keeping the weights of its best epoch by validation
 * accuracy; those are scored once on the held-out test split. No search, no choice but the epoch.
 */
import { readFile } from 'node:fs/promises';
import { decodeShard, referenceGenome, type DataShape } from '@netbreeder/shared-types';
import { TrainingProcess } from '@netbreeder/worker';
import { scoreChampion } from '../src/champion/score-champion.js';
import type { RunRecord } from '../src/store/run-store.js';

/** What the reference network reached with the whole budget. */
export interface ReferenceOutcome {
  seed: number;
  testError: number;
  /** The epoch whose weights were kept (best validation accuracy), of `epochs` trained. */
  bestEpoch: number;
  epochs: number;
  bestValAccuracy: number;
  samples: number;
  params: number;
  wallSeconds: number;
}

/**
 * Trains the reference network of `run`'s data once per seed, `parallel` trainings at a time (one
 * child process each), on the run's own split (every run of a task shares it).
 */
export async function referenceRows(run: RunRecord, seeds: readonly number[], budget: number, parallel: number, log: (line: string) => void): Promise<ReferenceOutcome[]> {
  const m = run.dataset.manifest;
  const data: DataShape = { inputShape: m.inputShape, numClasses: m.numClasses };
  const genome = referenceGenome(data);
  if (!genome) throw new Error(`no reference network fits this task's data (input [${data.inputShape.join(', ')}])`);
  const test = decodeShard(await readFile(run.dataset.testPath)).train;
  const pending = [...seeds];
  const out: ReferenceOutcome[] = [];
  const lane = async () => {
    const trainer = new TrainingProcess({ prefer: ['tensorflow', 'wasm'] });
    try {
      for (let seed = pending.shift(); seed !== undefined; seed = pending.shift()) {
        const began = Date.now();
        const outcome = await trainer.train({
          genome: { ...genome, training: { ...genome.training, epochs: 1000 } },
          data,
          shardPath: run.dataset.shardPath,
          splits: 'train',
          budget: { epochs: 1000, maxSamples: budget, maxSeconds: 86_400 },
          seed,
          exportModel: true,
          keepBestWeights: true,
        });
        const score = await scoreChampion(outcome.model!, test);
        const row: ReferenceOutcome = {
          seed,
          testError: 1 - score.accuracy,
          bestEpoch: outcome.bestEpoch ?? outcome.epochsRun,
          epochs: outcome.epochsRun,
          bestValAccuracy: outcome.valAccuracy ?? 0,
          samples: outcome.samplesSeen,
          params: outcome.paramCount,
          wallSeconds: (Date.now() - began) / 1000,
        };
        out.push(row);
        log(`reference seed ${seed}: test error ${(100 * row.testError).toFixed(2)}% (epoch ${row.bestEpoch} of ${row.epochs} kept), ${row.wallSeconds.toFixed(0)} s`);
      }
    } finally {
      await trainer.close();
    }
  };
  await Promise.all(Array.from({ length: Math.max(1, Math.min(parallel, seeds.length)) }, lane));
  return out.sort((a, b) => a.seed - b.seed);
}
