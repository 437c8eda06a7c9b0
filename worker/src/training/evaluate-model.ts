import * as tf from '@tensorflow/tfjs';
import { sampleSize, type LabelledSamples } from '@netbreeder/shared-types';
import { BatchAssembler, identityOrder } from './batches.js';

/** Accuracy, mean cross-entropy and the predicted class of every sample. */
export interface ModelEvaluation {
  accuracy: number;
  loss: number;
  predictions: Int32Array;
}

/** Probabilities are clipped to [ε, 1 − ε] before the log, as the layers library does. */
export const PROBABILITY_EPSILON = 1e-7;

/** Mean categorical cross-entropy of softmax outputs `probs` against one-hot `targets`. */
export function crossEntropy(probs: tf.Tensor, targets: tf.Tensor): tf.Scalar {
  return tf.tidy(() => tf.neg(tf.mean(tf.sum(tf.mul(targets, tf.log(tf.clipByValue(probs, PROBABILITY_EPSILON, 1 - PROBABILITY_EPSILON))), -1))) as tf.Scalar);
}

/**
 * Scores a model (inference mode: dropout off, batch norm on its moving statistics) on labelled
 * samples, batch by batch so memory stays bounded.
 * @param batchSize samples per forward pass; default 256.
 */
export function evaluateModel(model: tf.LayersModel, samples: LabelledSamples, batchSize = 256): ModelEvaluation {
  const inputShape = model.inputs[0]!.shape.slice(1) as number[];
  const numClasses = model.outputs[0]!.shape[1] as number;
  const predictions = new Int32Array(samples.count);
  if (samples.count === 0) return { accuracy: 0, loss: 0, predictions };
  const assembler = new BatchAssembler(samples, sampleSize(inputShape), numClasses, Math.min(batchSize, samples.count));
  const order = identityOrder(samples.count);
  let lossSum = 0;
  let correct = 0;
  for (let start = 0; start < samples.count; start += batchSize) {
    const size = Math.min(batchSize, samples.count - start);
    const batch = assembler.batch(order, start, size);
    const [lossValue, predicted] = tf.tidy(() => {
      const x = tf.tensor(batch.features, [size, ...inputShape]);
      const probs = model.predict(x) as tf.Tensor;
      const loss = crossEntropy(probs, tf.tensor2d(batch.oneHot, [size, numClasses]));
      return [loss.dataSync()[0]!, tf.argMax(probs, -1).dataSync() as Int32Array] as const;
    });
    lossSum += lossValue * size;
    for (let b = 0; b < size; b++) {
      predictions[start + b] = predicted[b]!;
      if (predicted[b] === batch.labels[b]) correct++;
    }
  }
  return { accuracy: correct / samples.count, loss: lossSum / samples.count, predictions };
}
