import * as tf from '@tensorflow/tfjs';
import { regressionFitness, type LabelledSamples, type ModelArtifactsMessage, type RegressionTestScores, type TargetScaling } from '@netbreeder/shared-types';
import { initBackend, loadModelFromMessage } from '@netbreeder/worker';
import { accuracyOf, averagePredictions, meanOfOutputs } from './ensemble-average.js';
import { regressionTestScores } from './score-champion.js';

/** Softmax probabilities of one trained model on every sample, [samples × classes] row by row, in batches of 256. */
async function probabilitiesOf(message: ModelArtifactsMessage, samples: LabelledSamples): Promise<Float32Array> {
  const model = await loadModelFromMessage(message);
  try {
    const shape = model.inputs[0]!.shape.slice(1) as number[];
    const size = shape.reduce((a, b) => a * b, 1);
    const classes = model.outputs[0]!.shape[1] as number;
    const out = new Float32Array(samples.count * classes);
    for (let start = 0; start < samples.count; start += 256) {
      const n = Math.min(256, samples.count - start);
      const probs = tf.tidy(() => (model.predict(tf.tensor(samples.features.subarray(start * size, (start + n) * size), [n, ...shape])) as tf.Tensor).dataSync());
      out.set(probs, start * classes);
    }
    return out;
  } finally {
    model.dispose();
  }
}

/**
 * Scores an averaging ensemble on the held-out test split (on the coordinator, which alone has
 * it): each member's softmax probabilities, their mean, its most probable class. For a regression
 * run (`target`), the mean of the members' predicted numbers, scored like a regression champion
 * (`accuracy` then holds the fitness 1 / (1 + standardised RMSE)).
 */
export async function scoreEnsemble(
  members: readonly ModelArtifactsMessage[],
  test: LabelledSamples,
  numClasses: number,
  target?: TargetScaling,
): Promise<{ accuracy: number; predictions: Int32Array; backend: string; regression?: RegressionTestScores }> {
  const { backend } = await initBackend();
  const probabilities: Float32Array[] = [];
  for (const m of members) probabilities.push(await probabilitiesOf(m, test));
  if (target) {
    const regression = regressionTestScores(test.targets!, meanOfOutputs(probabilities), target);
    return { accuracy: regressionFitness(regression.rmse / target.std), predictions: new Int32Array(0), backend, regression };
  }
  const { predictions } = averagePredictions(probabilities, numClasses);
  return { accuracy: accuracyOf(predictions, test.labels), predictions, backend };
}
