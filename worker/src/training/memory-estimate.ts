import { sampleSize, type GenomeAnalysis, type DataShape, type OptimizerName } from '@netbreeder/shared-types';

/** Per-parameter float slots each optimizer keeps (TensorFlow.js: Adam m and v; RMSprop mean square and momentum). */
const OPTIMIZER_SLOTS: Record<OptimizerName, number> = { adam: 2, rmsprop: 2, sgd: 0 };

/**
 * Tensors alive per activation element during one training step: the forward output kept for the
 * backward pass, its gradient, and a scratch copy inside composite kernels (transposes, pads).
 * A rule of thumb, deliberately on the generous side (common practice: 2 to 3).
 */
const ACTIVATION_COPIES = 3;

/** The estimate {@link estimateTrainingBytes} returns, part by part (bytes). */
export interface TrainingMemoryEstimate {
  weights: number;
  optimizer: number;
  activations: number;
  data: number;
  total: number;
}

/**
 * Estimates the memory one training holds beyond the process's baseline: weights and their
 * gradients, optimizer slots, activations of one batch (times {@link ACTIVATION_COPIES}), and the
 * training and validation samples as float32. All tensors are float32 (4 bytes).
 */
export function estimateTrainingBytes(
  analysis: GenomeAnalysis,
  data: DataShape,
  options: { batchSize: number; optimizer: OptimizerName; samples: number },
): TrainingMemoryEstimate {
  const weights = analysis.params * 4 * 2;
  const optimizer = analysis.params * 4 * OPTIMIZER_SLOTS[options.optimizer];
  const perSample = sampleSize(data.inputShape) + analysis.nodes.reduce((a, n) => a + (n.kind === 'repeat' ? 0 : sampleSize(n.outputShape)), 0); // a repeat's entry repeats its last layer's shape
  const activations = perSample * options.batchSize * 4 * ACTIVATION_COPIES;
  const dataBytes = options.samples * (sampleSize(data.inputShape) + 1) * 4;
  return { weights, optimizer, activations, data: dataBytes, total: weights + optimizer + activations + dataBytes };
}
