import type { TrainOutcome } from '../training/train-genome.js';

/**
 * TEST ONLY (`--test-only-inflate-accuracy`, refused unless NETBREEDER_TEST_MODE=1): what a lying
 * or broken worker reports. The training is real; the reported validation accuracy is raised by
 * `by` (at most 1) and the validation loss shrunk in proportion, as a PC that wants its genomes to
 * win (or one with a corrupting fault) might. Replicated verification must catch it.
 */
export function inflateOutcome(outcome: TrainOutcome, by: number): TrainOutcome {
  if (outcome.valAccuracy === null || outcome.valLoss === null) return outcome; // champion trainings are scored by the coordinator itself
  const valAccuracy = Math.min(1, outcome.valAccuracy + by);
  return { ...outcome, valAccuracy, valLoss: outcome.valLoss * (1 - by) };
}
