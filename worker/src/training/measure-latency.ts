import * as tf from '@tensorflow/tfjs';
import type { LabelledSamples } from '@netbreeder/shared-types';

/**
 * Median milliseconds to classify one sample alone (a batch of 1, result read back) on this
 * machine's CPU and current backend, over `runs` predictions after 3 warm-up calls. It depends on
 * the PC and on what else runs there, so figures from different workers compare only roughly.
 */
export function singleSampleLatencyMs(model: tf.LayersModel, samples: LabelledSamples, runs = 15): number {
  if (samples.count === 0) return 0;
  const shape = model.inputs[0]!.shape.slice(1) as number[];
  const size = shape.reduce((a, b) => a * b, 1);
  const times: number[] = [];
  for (let i = 0; i < runs + 3; i++) {
    const row = samples.features.subarray((i % samples.count) * size, ((i % samples.count) + 1) * size);
    const t0 = performance.now();
    tf.tidy(() => (model.predict(tf.tensor(row, [1, ...shape])) as tf.Tensor).dataSync());
    if (i >= 3) times.push(performance.now() - t0);
  }
  times.sort((a, b) => a - b);
  return times[Math.floor(times.length / 2)]!;
}
