/**
 * The ensemble's prediction: the mean of its members' softmax probabilities, then the most probable
 * class (the first among equals). Pure. `probabilities[m]` holds member m's [samples × classes]
 * probabilities, row by row.
 */
import { InternalError } from '@netbreeder/shared-types';
export function averagePredictions(probabilities: readonly Float32Array[], numClasses: number): { mean: Float32Array; predictions: Int32Array } {
  if (!probabilities.length) throw new InternalError('an ensemble needs at least one member');
  const length = probabilities[0]!.length;
  if (length % numClasses !== 0) throw new InternalError(`${length} probabilities do not split into rows of ${numClasses} classes`);
  const mean = meanOfOutputs(probabilities);
  const predictions = new Int32Array(length / numClasses);
  for (let s = 0; s < predictions.length; s++) {
    let best = 0;
    for (let c = 1; c < numClasses; c++) if (mean[s * numClasses + c]! > mean[s * numClasses + best]!) best = c;
    predictions[s] = best;
  }
  return { mean, predictions };
}

/**
 * The element-wise mean of the members' outputs: their softmax probabilities, or in a regression run
 * their predicted numbers (one per sample, standardised), which is the ensemble's prediction. Pure.
 */
export function meanOfOutputs(outputs: readonly Float32Array[]): Float32Array {
  if (!outputs.length) throw new InternalError('an ensemble needs at least one member');
  const length = outputs[0]!.length;
  outputs.forEach((p, m) => {
    if (p.length !== length) throw new InternalError(`member ${m} gives ${p.length} outputs, member 0 gives ${length}; score every member on the same samples`);
  });
  const mean = new Float32Array(length);
  for (const p of outputs) for (let i = 0; i < length; i++) mean[i]! += p[i]! / outputs.length;
  return mean;
}

/** Fraction of `predictions` equal to `labels`. */
export const accuracyOf = (predictions: ArrayLike<number>, labels: ArrayLike<number>): number => {
  let correct = 0;
  for (let i = 0; i < predictions.length; i++) if (predictions[i] === labels[i]) correct++;
  return predictions.length ? correct / predictions.length : 0;
};
