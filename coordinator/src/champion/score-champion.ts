import { regressionMetrics, type LabelledSamples, type ModelArtifactsMessage, type RegressionTestScores, type TargetScaling } from '@netbreeder/shared-types';
import { evaluateModel, evaluateRegression, initBackend, loadModelFromMessage, singleSampleLatencyMs } from '@netbreeder/worker';

export interface ChampionScore {
  /** Classification: test accuracy. Regression: the fitness 1 / (1 + standardised test RMSE), never shown as an accuracy. */
  accuracy: number;
  /** Mean cross-entropy, or (regression) mean squared error of the standardised target. */
  loss: number;
  /** Predicted class of every test sample, in test-split order; regression: the predicted target in its own units. */
  predictions: Int32Array | Float64Array;
  /** Regression only: RMSE, MAE and R² in the target's units, and the RMSE of predicting the training mean. */
  regression?: RegressionTestScores;
  backend: string;
  /** Median milliseconds to classify one sample alone (batch of 1) on this machine's CPU. */
  latencyMsPerSample: number;
}

/**
 * Scores a trained champion on the held-out test split, which only the coordinator has. Runs on
 * the best TensorFlow.js backend available here (the same choice a worker makes). With a regression
 * target (`target`: the training split's scaling) it scores the predicted number instead.
 */
export async function scoreChampion(model: ModelArtifactsMessage, test: LabelledSamples, target?: TargetScaling): Promise<ChampionScore> {
  const { backend } = await initBackend();
  const layersModel = await loadModelFromMessage(model);
  try {
    const latencyMsPerSample = test.count > 0 ? singleSampleLatencyMs(layersModel, test, 30) : 0;
    if (target) {
      const scored = evaluateRegression(layersModel, test);
      return { accuracy: scored.accuracy, loss: scored.loss, predictions: Float64Array.from(scored.predicted, (v) => v * target.std + target.mean), regression: regressionTestScores(test.targets!, scored.predicted, target), backend, latencyMsPerSample };
    }
    const { accuracy, loss, predictions } = evaluateModel(layersModel, test);
    return { accuracy, loss, predictions, backend, latencyMsPerSample };
  } finally {
    layersModel.dispose();
  }
}

/**
 * Test RMSE, MAE and R² in the target's units from standardised targets and predictions, with the
 * RMSE of always predicting the training mean (0 once standardised). Pure.
 */
export function regressionTestScores(standardizedTargets: Float32Array, standardizedPredictions: ArrayLike<number>, target: TargetScaling): RegressionTestScores {
  const m = regressionMetrics(standardizedTargets, standardizedPredictions);
  const baseline = regressionMetrics(standardizedTargets, new Float32Array(standardizedTargets.length));
  const units = (v: number) => (Number.isFinite(v) ? v * target.std : 1e6);
  return { rmse: units(m.rmse), mae: units(m.mae), r2: Number.isFinite(m.r2) ? m.r2 : -1e6, baselineRmse: units(baseline.rmse) };
}
