import type { LabelledSamples, ModelArtifactsMessage } from '@netbreeder/shared-types';
import * as tf from '@tensorflow/tfjs';
import { evaluateModel, initBackend, loadModelFromMessage } from '@netbreeder/worker';

export interface ChampionScore {
  accuracy: number;
  loss: number;
  /** Predicted class of every test sample, in test-split order. */
  predictions: Int32Array;
  backend: string;
  /** Median milliseconds to classify one sample alone (batch of 1) on this machine's CPU. */
  latencyMsPerSample: number;
}

/** Median time of `runs` single-sample predictions, after a few warm-up calls. */
function singleSampleLatencyMs(model: import('@tensorflow/tfjs').LayersModel, test: LabelledSamples, runs = 30): number {
  const shape = model.inputs[0]!.shape.slice(1) as number[];
  const size = shape.reduce((a, b) => a * b, 1);
  const times: number[] = [];
  for (let i = 0; i < runs + 3; i++) {
    const row = test.features.subarray((i % test.count) * size, ((i % test.count) + 1) * size);
    const t0 = performance.now();
    tf.tidy(() => (model.predict(tf.tensor(row, [1, ...shape])) as import('@tensorflow/tfjs').Tensor).dataSync());
    if (i >= 3) times.push(performance.now() - t0);
  }
  times.sort((a, b) => a - b);
  return times[Math.floor(times.length / 2)]!;
}

/**
 * Scores a trained champion on the held-out test split, which only the coordinator has. Runs on
 * the best TensorFlow.js backend available here (the same choice a worker makes).
 */
export async function scoreChampion(model: ModelArtifactsMessage, test: LabelledSamples): Promise<ChampionScore> {
  const { backend } = await initBackend();
  const layersModel = await loadModelFromMessage(model);
  try {
    const { accuracy, loss, predictions } = await evaluateModel(layersModel, test);
    return { accuracy, loss, predictions, backend, latencyMsPerSample: test.count > 0 ? singleSampleLatencyMs(layersModel, test) : 0 };
  } finally {
    layersModel.dispose();
  }
}
