import { defaultSearchSpace, type RunConfig } from '@netbreeder/shared-types';
import { parseRunConfig } from '@netbreeder/coordinator';

/**
 * A small, quick run on the demo tiles whose trainings still visibly learn: 150 tiles per class,
 * 3-6 epochs, learning rates from 1e-3 to 3e-2, small layers. A run of ten evaluations takes
 * seconds on two workers.
 */
export function smallRunConfig(name: string, evaluations: number, seed = 5): RunConfig {
  return parseRunConfig({
    name,
    seed,
    dataset: { kind: 'demo-tiles', samplesPerClass: 150, seed },
    search: { algorithm: 'aging-evolution', populationSize: 4, sampleSize: 2 },
    budget: { maxEvaluations: evaluations, maxMinutes: 10 },
    evaluation: { maxSeconds: 30 },
    champion: { epochs: 8, maxSeconds: 60 },
    searchSpace: {
      ...defaultSearchSpace(),
      epochs: { min: 3, max: 6 },
      learningRate: { min: 1e-3, max: 3e-2 },
      maxFlops: 2_000_000,
      filters: { min: 4, max: 16 },
      units: { min: 8, max: 64 },
    },
  });
}
