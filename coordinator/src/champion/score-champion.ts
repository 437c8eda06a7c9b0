import type { LabelledSamples, ModelArtifactsMessage } from '@netbreeder/shared-types';
import { evaluateModel, initBackend, loadModelFromMessage, singleSampleLatencyMs } from '@netbreeder/worker';

export interface ChampionScore {
  accuracy: number;
  loss: number;
  /** Predicted class of every test sample, in test-split order. */
  predictions: Int32Array;
  backend: string;
  /** Median milliseconds to classify one sample alone (batch of 1) on this machine's CPU. */
  latencyMsPerSample: number;
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
    return { accuracy, loss, predictions, backend, latencyMsPerSample: test.count > 0 ? singleSampleLatencyMs(layersModel, test, 30) : 0 };
  } finally {
    layersModel.dispose();
  }
}
