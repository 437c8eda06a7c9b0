import * as tf from '@tensorflow/tfjs';
import { beforeAll, describe, expect, it } from 'vitest';
import type { DataShape } from '@netbreeder/shared-types';
import { initBackend } from './backend.js';
import { buildModel } from './build-model.js';
import { crossEntropy } from './evaluate-model.js';
import { FusedAdamOptimizer } from './fused-adam.js';
import { ADAM_UPDATE, adamUpdateOptions } from './kernels/adam-update.js';
import { nativeKernels } from './kernels/native-kernels.js';
import { setWasmKernelOverride } from './kernels/register-wasm-kernels.js';
import { refCnn, refCnnBn, refMlp } from './reference-genomes.js';
import { syntheticSamples } from './synthetic-samples.js';

/**
 * The fused Adam update (one kernel per weight tensor on wasm) against the library's Adam: on
 * wasm it must train as the library's optimizer does there within 1e-5 (the same formula, rounded
 * once instead of after every operation), and it must match the TensorFlow.js cpu backend (the
 * library's reference implementation) running the library's Adam within 1e-4 after several steps.
 */
const FLAT: DataShape = { inputShape: [20], numClasses: 5 };
const IMAGE: DataShape = { inputShape: [8, 8, 1], numClasses: 5 };
const STEPS = 6;

async function trainSteps(genome: ReturnType<typeof refMlp>, data: DataShape, backend: 'cpu' | 'wasm', fused: boolean, learningRate = 0.01): Promise<Record<string, Float32Array>> {
  await tf.setBackend(backend);
  const samples = syntheticSamples(data, 16, 3);
  const model = buildModel(genome, data, 7);
  const optimizer = fused ? new FusedAdamOptimizer(learningRate, 0.9, 0.999) : tf.train.adam(learningRate);
  try {
    const x = tf.tensor(samples.features, [16, ...data.inputShape]);
    const y = tf.tidy(() => tf.oneHot(tf.tensor1d(samples.labels, 'int32'), data.numClasses));
    for (let i = 0; i < STEPS; i++) {
      tf.dispose(
        optimizer.minimize(() => {
          let loss = crossEntropy(model.apply(x, { training: true }) as tf.Tensor, y);
          for (const p of model.calculateLosses()) loss = tf.add(loss, p) as tf.Scalar;
          return loss;
        }, true) ?? [],
      );
    }
    tf.dispose([x, y]);
    const weights = Object.fromEntries(model.weights.map((w) => [w.originalName, w.read().dataSync() as Float32Array]));
    const slots = await optimizer.getWeights();
    // Slot names carry the variables' unique names (`d1/kernel_2/m`), which differ between models.
    slots.forEach((s, i) => (weights[`optimizer:${i}:${s.name.replace(/_\d+\//, '/')}`] = s.tensor.dataSync() as Float32Array));
    tf.dispose(slots.filter((s) => !(s.tensor instanceof tf.Variable)).map((s) => s.tensor));
    return weights;
  } finally {
    optimizer.dispose();
    model.dispose();
  }
}

function maxRelativeError(got: Float32Array, ref: Float32Array): number {
  let diff = 0;
  let scale = 0;
  for (let i = 0; i < ref.length; i++) {
    diff = Math.max(diff, Math.abs(got[i]! - ref[i]!));
    scale = Math.max(scale, Math.abs(ref[i]!));
  }
  return scale === 0 ? diff : diff / scale;
}

describe('FusedAdamOptimizer', () => {
  beforeAll(async () => {
    await initBackend({ prefer: ['wasm'] });
  });

  const cases = [
    ['a dense network (ref-mlp shape, L2 on kernels)', { ...refMlp(), training: { ...refMlp().training, weightDecay: 1e-4 } }, FLAT],
    ['a convolutional network (ref-cnn shape)', refCnn(), IMAGE],
  ] as const;

  for (const [label, genome, data] of cases) {
    it(`trains ${label} on wasm as the library's Adam does (1e-5), and within 1e-4 of it on the cpu backend`, async () => {
      expect(tf.getKernel(ADAM_UPDATE, 'wasm')).toBeDefined();
      expect(nativeKernels(tf.findBackend('wasm')), 'our WebAssembly kernels load').not.toBeNull();
      const fused = await trainSteps(genome, data, 'wasm', true); // our WebAssembly kernel (adam-update.c)
      adamUpdateOptions.direct = false;
      let fusedJs: Record<string, Float32Array>;
      try {
        fusedJs = await trainSteps(genome, data, 'wasm', true); // the same update in JavaScript
      } finally {
        adamUpdateOptions.direct = true;
      }
      setWasmKernelOverride(ADAM_UPDATE, false);
      let library: Record<string, Float32Array>;
      try {
        library = await trainSteps(genome, data, 'wasm', true); // the kernel off: the library's update runs
      } finally {
        setWasmKernelOverride(ADAM_UPDATE, true);
      }
      const reference = await trainSteps(genome, data, 'cpu', false);
      await tf.setBackend('wasm');
      expect(Object.keys(fused).sort()).toEqual(Object.keys(reference).sort());
      expect(Object.keys(fused).some((k) => k.endsWith('/m'))).toBe(true);
      for (const name of Object.keys(reference)) {
        expect(maxRelativeError(fused[name]!, library[name]!), name).toBeLessThan(1e-5);
        expect(maxRelativeError(fused[name]!, reference[name]!), name).toBeLessThan(1e-4);
        expect(maxRelativeError(fusedJs[name]!, library[name]!), `${name} (JavaScript)`).toBeLessThan(1e-5);
      }
    });
  }

  it('trains a network with batch norm on wasm as the library does (its moving statistics are not trained)', async () => {
    const fused = await trainSteps(refCnnBn(), IMAGE, 'wasm', true);
    setWasmKernelOverride(ADAM_UPDATE, false);
    try {
      const library = await trainSteps(refCnnBn(), IMAGE, 'wasm', true);
      // The conv biases feeding batch norm (c1, c2), and the moving means that follow them, are
      // left out: their gradient is zero in theory and rounding noise in practice, which Adam
      // scales to full steps, so any change of rounding moves them by up to the learning rate
      // (ENGINE.md, "Batch norm in training"); the same keeps the cpu backend out of this comparison.
      const compared = Object.keys(library).filter((name) => !/^(optimizer:\d+:)?(c\d\/bias|b\d\/moving_mean)/.test(name));
      expect(compared.length).toBeGreaterThan(Object.keys(library).length / 2);
      for (const name of compared) expect(maxRelativeError(fused[name]!, library[name]!), name).toBeLessThan(1e-5);
    } finally {
      setWasmKernelOverride(ADAM_UPDATE, true);
    }
  });

  it('leaves no tensor behind, as the library leaves none', async () => {
    for (const fused of [false, true]) {
      await trainSteps(refMlp(), FLAT, 'wasm', fused);
      const before = tf.memory().numTensors;
      await trainSteps(refMlp(), FLAT, 'wasm', fused);
      expect(tf.memory().numTensors, fused ? 'fused' : 'library').toBe(before);
    }
  });
});
