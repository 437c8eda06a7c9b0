import * as tf from '@tensorflow/tfjs';
import { expect } from 'vitest';
import type { DataShape, Genome } from '@netbreeder/shared-types';
import { buildModel } from './build-model.js';
import { crossEntropy } from './evaluate-model.js';
import { syntheticSamples } from './synthetic-samples.js';

/** Shared fixtures of the training engine's unit tests (not used by the engine itself). */

/** The loss and the gradient of every trainable weight (by weight name) of one training step of `genome` on 8 synthetic samples, on `backend`. */
export async function oneTrainingStep(genome: Genome, data: DataShape, backend: 'cpu' | 'wasm'): Promise<{ loss: number; grads: Record<string, Float32Array> }> {
  await tf.setBackend(backend);
  const samples = syntheticSamples(data, 8, 5);
  const model = buildModel(genome, data, 21);
  try {
    return tf.tidy(() => {
      const x = tf.tensor(samples.features, [8, ...data.inputShape]);
      const y = tf.oneHot(tf.tensor1d(samples.labels, 'int32'), data.numClasses);
      const { value, grads } = tf.variableGrads(() => {
        let loss = crossEntropy(model.apply(x, { training: true }) as tf.Tensor, y);
        for (const p of model.calculateLosses()) loss = tf.add(loss, p) as tf.Scalar;
        return loss;
      });
      return {
        loss: value.dataSync()[0]!,
        grads: Object.fromEntries(Object.entries(grads).map(([k, g]) => [k.replace(/_\d+$/, ''), g.dataSync() as Float32Array])),
      };
    });
  } finally {
    model.dispose();
  }
}

/**
 * Expects two training steps to agree: the loss and every weight's gradient within `tolerance`
 * relative error (max |got − ref| / max |ref| per weight). A conv bias feeding batch norm has a
 * gradient of exactly zero in theory (the batch mean cancels it); both backends give rounding
 * noise there, so it is compared absolutely (1e-6) instead. Returns the weight names.
 */
export function expectSameStep(got: Awaited<ReturnType<typeof oneTrainingStep>>, ref: Awaited<ReturnType<typeof oneTrainingStep>>, tolerance: number): string[] {
  expect(Math.abs(got.loss - ref.loss) / ref.loss).toBeLessThan(tolerance);
  const names = Object.keys(ref.grads).sort();
  expect(Object.keys(got.grads).sort()).toEqual(names);
  for (const name of names) {
    const a = got.grads[name]!;
    const b = ref.grads[name]!;
    let diff = 0;
    let scale = 0;
    for (let i = 0; i < b.length; i++) {
      diff = Math.max(diff, Math.abs(a[i]! - b[i]!));
      scale = Math.max(scale, Math.abs(b[i]!));
    }
    if (scale < 1e-6) expect(diff, name).toBeLessThan(1e-6);
    else expect(diff / scale, name).toBeLessThan(tolerance);
  }
  return names;
}
