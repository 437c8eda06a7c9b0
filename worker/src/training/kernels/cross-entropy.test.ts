import * as tf from '@tensorflow/tfjs';
import { beforeAll, describe, expect, it } from 'vitest';
import { initBackend } from '../backend.js';
import { crossEntropy } from '../evaluate-model.js';
import { CROSS_ENTROPY, trainingCrossEntropy } from './cross-entropy.js';
import { randomArray } from './test-arrays.js';

beforeAll(async () => {
  expect((await initBackend({ prefer: ['wasm'] })).backend).toBe('wasm');
});

/** Softmax rows of random logits, with two entries pushed to exactly 0 and 1 (outside the clip). */
function batch(rows: number, classes: number, name: string) {
  const probs = tf.tidy(() => tf.softmax(tf.tensor2d(randomArray(rows * classes, `logits ${name}`), [rows, classes]).mul(3)).arraySync() as number[][]);
  probs[0]![0] = 0;
  probs[1]![classes - 1] = 1;
  const labels = Array.from({ length: rows }, (_, i) => (i * 7) % classes);
  // Label smoothing leaves no target zero: one row smoothed, the rest one-hot.
  const targets = labels.map((l, i) => Array.from({ length: classes }, (_, c) => (i === 2 ? (c === l ? 0.9 + 0.1 / classes : 0.1 / classes) : c === l ? 1 : 0)));
  return { probs, targets };
}

async function lossAndGrad(backend: 'cpu' | 'wasm', loss: (p: tf.Tensor, t: tf.Tensor) => tf.Scalar, probs: number[][], targets: number[][]) {
  await tf.setBackend(backend);
  return tf.tidy(() => {
    const t = tf.tensor2d(targets);
    const { value, grad } = tf.valueAndGrad((p: tf.Tensor) => loss(p, t))(tf.tensor2d(probs));
    return { value: value.dataSync()[0]!, grad: Array.from(grad.dataSync()) };
  });
}

describe('our cross-entropy kernels (wasm)', () => {
  it('are registered on wasm', () => {
    expect(tf.getKernel(CROSS_ENTROPY, 'wasm')).toBeDefined();
  });

  for (const [rows, classes] of [
    [64, 10],
    [5, 4],
    [3, 2],
  ] as const) {
    it(`give the composed loss's gradient bit for bit and its value within 1e-6, [${rows}, ${classes}]`, async () => {
      const { probs, targets } = batch(rows, classes, `${rows}x${classes}`);
      const ours = await lossAndGrad('wasm', trainingCrossEntropy, probs, targets);
      const composed = await lossAndGrad('wasm', crossEntropy, probs, targets);
      // The reference implementation: the composed loss on TensorFlow.js's cpu backend.
      const cpu = await lossAndGrad('cpu', crossEntropy, probs, targets);
      expect(ours.grad).toEqual(composed.grad);
      expect(ours.grad).toEqual(cpu.grad);
      expect(Math.abs(ours.value - composed.value)).toBeLessThan(1e-6 * Math.max(1, Math.abs(composed.value)));
      // Outside [ε, 1 − ε] the clip passes no gradient.
      expect(ours.grad[0]).toBe(0);
      expect(ours.grad[2 * classes - 1]).toBe(0);
      await tf.setBackend('wasm');
    });
  }

  it('leaves no tensor behind', async () => {
    await tf.setBackend('wasm');
    const { probs, targets } = batch(8, 3, 'leak');
    const step = () => tf.tidy(() => tf.grad((p: tf.Tensor) => trainingCrossEntropy(p, tf.tensor2d(targets)))(tf.tensor2d(probs)).dataSync());
    step();
    const tensors = tf.memory().numTensors;
    const buffers = tf.engine().backend.numDataIds();
    for (let i = 0; i < 5; i++) step();
    expect(tf.memory().numTensors).toBe(tensors);
    expect(tf.engine().backend.numDataIds()).toBe(buffers);
  });
});
