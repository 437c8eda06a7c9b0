import { execFileSync, spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import * as tf from '@tensorflow/tfjs';
import { beforeAll, describe, expect, it } from 'vitest';
import { initBackend } from '../backend.js';
import { filterGradOptions } from './conv-filter-gradient.js';
import { conv2dOptions } from './direct-conv2d.js';
import { KERNELS_MODULE, nativeKernels } from './native-kernels.js';
import { randomArray, relativeError } from './test-arrays.js';

// Reference: the TensorFlow.js cpu backend (the library's reference implementation of
// Conv2DBackpropFilter). Our WebAssembly kernel must agree with it within 1e-4 relative error
// (max |wasm − cpu| / max |cpu|), as every kernel we register does.
const TOLERANCE = 1e-4;

async function filterGrad(backend: 'cpu' | 'wasm', x: tf.Tensor4D, dy: tf.Tensor4D, filterShape: number[], stride: number, pad: unknown) {
  await tf.setBackend(backend);
  return tf.tidy(() => {
    const xs = tf.tensor(x.dataSync(), x.shape);
    const dys = tf.tensor(dy.dataSync(), dy.shape);
    const out = tf.engine().runKernel('Conv2DBackpropFilter', { x: xs, dy: dys }, { strides: [stride, stride], pad, dataFormat: 'NHWC', filterShape } as unknown as tf.NamedAttrMap) as tf.Tensor;
    return out.dataSync() as Float32Array;
  });
}

async function forward(backend: 'cpu' | 'wasm', x: tf.Tensor4D, f: tf.Tensor4D, stride: number, pad: unknown) {
  await tf.setBackend(backend);
  return tf.tidy(() => {
    const out = tf.engine().runKernel('Conv2D', { x: tf.tensor(x.dataSync(), x.shape), filter: tf.tensor(f.dataSync(), f.shape) }, { strides: [stride, stride], pad, dataFormat: 'NHWC', dilations: [1, 1] } as unknown as tf.NamedAttrMap) as tf.Tensor;
    return out.dataSync() as Float32Array;
  });
}

beforeAll(async () => {
  expect((await initBackend({ prefer: ['wasm'] })).backend).toBe('wasm');
});

describe('our WebAssembly kernels: the direct filter gradient and forward convolution', () => {
  it('loads into the wasm backend', () => {
    expect(nativeKernels(tf.findBackend('wasm'))).not.toBeNull();
  });

  // Channel counts chosen to run every block of filter-grad.c (4 input × 8 output channels, 16
  // output channels of one input channel, 4 and 1 output channels, input channels left over) and of
  // conv2d.c (8 and 4 output channels, and the last three or two together).
  const shapes: Array<{ x: [number, number, number, number]; co: number }> = [
    { x: [2, 9, 8, 5], co: 15 },
    { x: [3, 7, 7, 1], co: 16 },
    { x: [2, 8, 6, 8], co: 24 },
    { x: [1, 5, 11, 3], co: 22 },
  ];
  const pads: unknown[] = ['same', 'valid', [[0, 0], [2, 1], [0, 2], [0, 0]]];
  for (const { x: xShape, co } of shapes)
    for (const kernel of [1, 3, 5])
      for (const stride of [1, 2])
        for (const pad of pads) {
          const name = `x ${xShape.join('x')} co ${co} k${kernel} s${stride} ${typeof pad === 'string' ? pad : 'explicit'}`;
          it(`matches the cpu backend: ${name}`, async () => {
            const filterShape = [kernel, kernel, xShape[3], co];
            const info = tf.backend_util.computeConv2DInfo(xShape, filterShape as [number, number, number, number], stride, 1, pad as 'same');
            const x = tf.tensor4d(randomArray(tf.util.sizeFromShape(xShape), `x ${name}`), xShape);
            const dy = tf.tensor4d(randomArray(tf.util.sizeFromShape(info.outShape), `dy ${name}`), info.outShape);
            try {
              const ref = await filterGrad('cpu', x, dy, filterShape, stride, pad);
              filterGradOptions.route = 'direct';
              const got = await filterGrad('wasm', x, dy, filterShape, stride, pad);
              expect(relativeError(got, ref)).toBeLessThan(TOLERANCE);
              // The same inputs give the same bits (one fixed order of summation).
              expect(Array.from(await filterGrad('wasm', x, dy, filterShape, stride, pad))).toEqual(Array.from(got));
              // The forward convolution (conv2d.c) of the same shapes.
              const f = tf.tensor4d(randomArray(tf.util.sizeFromShape(filterShape), `f ${name}`), filterShape as [number, number, number, number]);
              try {
                const forwardRef = await forward('cpu', x, f, stride, pad);
                conv2dOptions.direct = true;
                expect(relativeError(await forward('wasm', x, f, stride, pad), forwardRef), 'forward').toBeLessThan(TOLERANCE);
              } finally {
                f.dispose();
              }
            } finally {
              filterGradOptions.route = 'auto';
              x.dispose();
              dy.dispose();
            }
          });
        }

  it('leaves no tensor and no wasm memory behind', async () => {
    await tf.setBackend('wasm');
    const x = tf.randomNormal([8, 14, 14, 16]);
    const dy = tf.randomNormal([8, 14, 14, 32]);
    const run = () => tf.tidy(() => (tf.engine().runKernel('Conv2DBackpropFilter', { x, dy }, { strides: [1, 1], pad: 'same', dataFormat: 'NHWC', filterShape: [3, 3, 16, 32] } as unknown as tf.NamedAttrMap) as tf.Tensor).sum().dataSync());
    run();
    const before = { tensors: tf.memory().numTensors, bytes: tf.memory().numBytes };
    for (let i = 0; i < 20; i++) run();
    expect({ tensors: tf.memory().numTensors, bytes: tf.memory().numBytes }).toEqual(before);
    x.dispose();
    dy.dispose();
  });

  // The module is committed beside its sources; where Debian's clang and lld are installed (CI
  // installs them), a rebuild must give the same bytes, so the module cannot drift from its source.
  const hasClang = spawnSync('clang', ['--version']).status === 0 && spawnSync('wasm-ld', ['--version']).status === 0;
  it.skipIf(!hasClang)('is the build of its sources (worker/native/build.sh)', () => {
    const dir = mkdtempSync(join(tmpdir(), 'nb-kernels-'));
    try {
      const script = fileURLToPath(new URL('../../../native/build.sh', import.meta.url));
      execFileSync('bash', [script, join(dir, 'rebuilt.wasm')]);
      expect(readFileSync(join(dir, 'rebuilt.wasm')).equals(readFileSync(KERNELS_MODULE))).toBe(true);
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });
});
