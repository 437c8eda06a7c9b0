import type { EvaluationResult } from '@netbreeder/shared-types';

/**
 * Training samples a search result spent in its own job: `samplesSeen`, less the epochs it took
 * over from a checkpoint (a promoted candidate continuing its lower rung, an attempt resuming an
 * earlier one), whose samples were spent and counted before.
 */
export function newSamples(result: Pick<EvaluationResult, 'samplesSeen' | 'start'>, trainCount: number): number {
  const carried = result.start && (result.start.kind === 'own-checkpoint' || result.start.kind === 'resumed') ? result.start.fromEpoch * trainCount : 0;
  return Math.max(0, result.samplesSeen - carried);
}
