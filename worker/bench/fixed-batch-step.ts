import * as tf from '@tensorflow/tfjs';
import type { DataShape, Genome } from '@netbreeder/shared-types';
import { buildModel } from '../src/training/build-model.js';
import { trainingCrossEntropy } from '../src/training/kernels/cross-entropy.js';
import { makeOptimizer } from '../src/training/train-genome.js';
import { syntheticSamples } from '../src/training/synthetic-samples.js';

/**
 * One Adam training step of `genome` on a fixed synthetic batch, for the kernel benchmarks that
 * time or profile single steps (`ab-step.ts`, `profile-step.ts`). Each call trains once.
 */
export function fixedBatchStep(genome: Genome, data: DataShape, batch = 64): () => void {
  const samples = syntheticSamples(data, batch, 1);
  const model = buildModel(genome, data, 1);
  const optimizer = makeOptimizer('adam', 0.001);
  const x = tf.tensor(samples.features, [batch, ...data.inputShape]);
  const y = tf.oneHot(tf.tensor1d(samples.labels, 'int32'), data.numClasses);
  return () => tf.dispose(optimizer.minimize(() => trainingCrossEntropy(model.apply(x, { training: true }) as tf.Tensor, y), true) ?? []);
}
