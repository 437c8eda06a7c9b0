import { writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { defaultSearchSpace } from '@netbreeder/shared-types';

/** Lock and stalled-check settings of the fault tests: a vanished worker's job returns within about 6 s. */
export const FAULT_LOCK_MS = 4000;
export const FAULT_STALLED_CHECK_MS = 2000;

/**
 * A run file for fault tests: real training on the demo tiles, with trainings long enough
 * (about 1 to 3 s on a busy 2-core machine) that kills land mid-job, and short enough that dozens finish in a minute.
 */
export async function writeFaultRunFile(dir: string, evaluations: number, seed = 11): Promise<string> {
  const path = join(dir, 'fault-run.json');
  const config = {
    name: 'fault test',
    seed,
    dataset: { kind: 'demo-tiles', samplesPerClass: 80, seed },
    search: { algorithm: 'aging-evolution', populationSize: 8, sampleSize: 3 },
    budget: { maxEvaluations: evaluations, maxMinutes: 30 },
    evaluation: { maxSeconds: 20, maxAttempts: 4 },
    champion: { epochs: 10, maxSeconds: 60 },
    searchSpace: { ...defaultSearchSpace(), epochs: { min: 6, max: 12 }, maxFlops: 1_000_000, filters: { min: 4, max: 12 }, units: { min: 8, max: 48 } },
  };
  await writeFile(path, JSON.stringify(config, null, 2));
  return path;
}

/** Worker flags that match the fault tests' lock settings. */
export const faultWorkerArgs = (): string[] => ['--lock-ms', String(FAULT_LOCK_MS), '--stalled-check-ms', String(FAULT_STALLED_CHECK_MS)];
