import * as tf from '@tensorflow/tfjs';
import { beforeAll, describe, expect, it } from 'vitest';
import { initBackend } from './backend.js';
import { DilatedConv1d } from './dilated-conv1d.js';
import { randomArray, relativeError } from './kernels/test-arrays.js';

// Reference: TensorFlow.js's own Conv1D layer with dilationRate (its forward pass is defined for
// any dilation; only its gradient is missing). Same weights, same input: outputs within 1e-5.
beforeAll(async () => {
  await initBackend({ prefer: ['wasm'] });
});

describe('DilatedConv1d', () => {
  const grid: Array<[number, number, number, 'same' | 'valid']> = [];
  for (const steps of [7, 12]) for (const kernel of [2, 3]) for (const dilation of [2, 3]) for (const padding of ['same', 'valid'] as const) grid.push([steps, kernel, dilation, padding]);

  for (const backend of ['cpu', 'wasm'] as const)
    it.each(grid)(`${backend}: %i steps, kernel %i, dilation %i, %s: equals the library's dilated Conv1D`, async (steps, kernel, dilation, padding) => {
      await tf.setBackend(backend);
      const args = { filters: 4, kernelSize: kernel, padding, activation: 'tanh' as const };
      const ours = new DilatedConv1d({ ...args, name: 'ours', dilation, kernelInitializer: tf.initializers.glorotUniform({ seed: 1 }) });
      const library = tf.layers.conv1d({ ...args, name: 'library', dilationRate: dilation, strides: 1 });
      const x = tf.tensor3d(randomArray(2 * steps * 3, 'dilated x'), [2, steps, 3]);
      try {
        const built = ours.apply(x) as tf.Tensor; // builds the weights
        library.apply(x);
        library.setWeights([ours.getWeights()[0]!, tf.tensor1d(randomArray(4, 'dilated bias'))]);
        ours.setWeights(library.getWeights());
        const got = ours.apply(x) as tf.Tensor;
        const want = library.apply(x) as tf.Tensor;
        expect(got.shape).toEqual(want.shape);
        expect(ours.computeOutputShape([null, steps, 3])).toEqual([null, want.shape[1], 4]);
        expect(relativeError(got.dataSync(), want.dataSync())).toBeLessThan(1e-5);
        tf.dispose([built, got, want]);
      } finally {
        x.dispose();
        ours.dispose();
        library.dispose();
        await tf.setBackend('wasm');
      }
    });

  it("saves as the library's Conv1D with its dilation, so a plain loader rebuilds it", () => {
    const layer = new DilatedConv1d({ name: 'c', filters: 3, kernelSize: 3, dilation: 2, padding: 'same', activation: 'relu', kernelInitializer: tf.initializers.glorotUniform({ seed: 1 }) });
    const config = layer.getConfig();
    expect(DilatedConv1d.className).toBe('Conv1D');
    expect([config['name'], config['dilationRate'], config['kernelSize'], config['filters'], config['padding']]).toEqual(['c', [2], [3], 3, 'same']);
  });
});
