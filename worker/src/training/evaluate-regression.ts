import * as tf from '@tensorflow/tfjs';
import { regressionFitness, regressionMetrics, sampleSize, type LabelledSamples, type RegressionMetrics } from '@netbreeder/shared-types';
import { ShardMismatchError } from './errors.js';

/** A regression network scored on a split, in standardised target units. */
export interface RegressionEvaluation {
  /** The search's fitness, 1 / (1 + RMSE): see `regressionFitness`. Not an accuracy. */
  accuracy: number;
  /** Mean squared error. */
  loss: number;
  metrics: RegressionMetrics;
  /** The standardised prediction of every sample, in split order. */
  predicted: Float32Array;
}

/** Mean squared error of `predicted` ([n, 1]) against `targets` ([n, 1]). */
export const meanSquaredError = (predicted: tf.Tensor, targets: tf.Tensor): tf.Scalar => tf.tidy(() => tf.mean(tf.square(tf.sub(predicted, targets))) as tf.Scalar);

/**
 * Scores a one-unit regression model (inference mode) on samples with standardised targets, batch
 * by batch so memory stays bounded.
 */
export function evaluateRegression(model: tf.LayersModel, samples: LabelledSamples, batchSize = 256): RegressionEvaluation {
  const inputShape = model.inputs[0]!.shape.slice(1) as number[];
  const length = sampleSize(inputShape);
  const targets = samples.targets;
  if (!targets || targets.length !== samples.count) throw new ShardMismatchError(`a regression split needs one target per sample (${targets?.length ?? 'none'} for ${samples.count})`);
  const predicted = new Float32Array(samples.count);
  for (let start = 0; start < samples.count; start += batchSize) {
    const size = Math.min(batchSize, samples.count - start);
    const out = tf.tidy(() => (model.predict(tf.tensor(samples.features.subarray(start * length, (start + size) * length), [size, ...inputShape])) as tf.Tensor).dataSync());
    predicted.set(out as Float32Array, start);
  }
  if (samples.count === 0) return { accuracy: 0, loss: 0, metrics: { mse: 0, rmse: 0, mae: 0, r2: 0 }, predicted };
  const metrics = regressionMetrics(targets, predicted);
  return { accuracy: regressionFitness(metrics.rmse), loss: metrics.mse, metrics, predicted };
}
