import * as tf from '@tensorflow/tfjs';
import { beforeAll, describe, expect, it } from 'vitest';
import { initBackend } from '../backend.js';
import { filterGradOptions, type FilterGradRoute } from './conv-filter-gradient.js';
import { inputGradOptions } from './conv-gradients.js';
import { matMulOptions } from './batch-mat-mul.js';
import { maxPoolGradOptions } from './max-pool-grad.js';
import { leadingSumOptions } from './leading-sum.js';
import { BATCH_NORM_TRAINING } from './batch-norm-training.js';
import { WASM_TRAINING_KERNELS } from './register-wasm-kernels.js';
import { randomArray, relativeError } from './test-arrays.js';

// Reference: the TensorFlow.js cpu backend, the library's own reference implementation of every
// kernel. Each kernel we register for wasm must agree with it within 1e-4 relative error, measured
// as max |wasm − cpu| / max |cpu| over the whole output.
const TOLERANCE = 1e-4;

type Pad = 'same' | 'valid' | [[number, number], [number, number], [number, number], [number, number]];
const PADS: Pad[] = ['same', 'valid', [[0, 0], [1, 2], [2, 0], [0, 0]]];
const padName = (p: Pad) => (typeof p === 'string' ? p : 'explicit');

/** Runs one kernel through the engine on `backend` and reads its output back. */
async function runOn(backend: 'cpu' | 'wasm', kernel: string, inputs: Record<string, { shape: number[]; data: Float32Array }>, attrs: object) {
  await tf.setBackend(backend);
  return tf.tidy(() => {
    const tensors = Object.fromEntries(Object.entries(inputs).map(([k, v]) => [k, tf.tensor(v.data, v.shape)]));
    const out = tf.engine().runKernel(kernel, tensors, attrs as tf.NamedAttrMap) as tf.Tensor;
    return { shape: out.shape, data: out.dataSync() as Float32Array };
  });
}

interface Case {
  name: string;
  xShape: [number, number, number, number];
  kernel: number;
  stride: number;
  pad: Pad;
  outChannels: number; // filters for conv2d, multiplier for depthwise
}

function cases(depthwise: boolean): Case[] {
  const out: Case[] = [];
  const shapes: Array<[number, number, number, number]> = [
    [2, 7, 8, 3],
    [3, 10, 9, 2],
  ];
  for (const xShape of shapes)
    for (const kernel of [1, 3, 5])
      for (const stride of [1, 2])
        for (const pad of PADS) {
          const outChannels = depthwise ? (xShape[3] === 3 ? 1 : 2) : xShape[3] === 3 ? 4 : 1;
          out.push({ name: `x${xShape.join('x')} k${kernel} s${stride} ${padName(pad)} out${outChannels}`, xShape, kernel, stride, pad, outChannels });
        }
  return out;
}

function shapesOf(c: Case, depthwise: boolean) {
  const filterShape = [c.kernel, c.kernel, c.xShape[3], c.outChannels] as [number, number, number, number];
  const info = tf.backend_util.computeConv2DInfo(c.xShape, filterShape, c.stride, 1, c.pad as 'same', undefined, depthwise);
  return { filterShape, dyShape: info.outShape as number[] };
}

async function compare(kernel: string, inputs: Record<string, { shape: number[]; data: Float32Array }>, attrs: object) {
  const ref = await runOn('cpu', kernel, inputs, attrs);
  const got = await runOn('wasm', kernel, inputs, attrs);
  expect(got.shape).toEqual(ref.shape);
  return relativeError(got.data, ref.data);
}

/** Runs `check` with our WebAssembly kernel (`direct`) and with the route it replaces, restoring the switch. */
async function bothRoutes(options: { direct: boolean }, check: (route: string) => Promise<void>) {
  for (const direct of [true, false]) {
    options.direct = direct;
    try {
      await check(direct ? 'our WebAssembly kernel' : 'the route it replaces');
    } finally {
      options.direct = true;
    }
  }
}

beforeAll(async () => {
  const choice = await initBackend({ prefer: ['wasm'] });
  expect(choice.backend).toBe('wasm');
});

describe('wasm training kernels match the cpu backend (reference implementation)', () => {
  it('registers every kernel it promises', () => {
    for (const name of WASM_TRAINING_KERNELS) expect(tf.getKernel(name, 'wasm'), name).toBeDefined();
  });

  for (const c of cases(false)) {
    it(`Conv2DBackpropFilter and Conv2DBackpropInput ${c.name}`, async () => {
      const { filterShape, dyShape } = shapesOf(c, false);
      const x = { shape: c.xShape, data: randomArray(tf.util.sizeFromShape(c.xShape), `x ${c.name}`) };
      const dy = { shape: dyShape, data: randomArray(tf.util.sizeFromShape(dyShape), `dy ${c.name}`) };
      const filter = { shape: filterShape, data: randomArray(tf.util.sizeFromShape(filterShape), `f ${c.name}`) };
      const common = { strides: [c.stride, c.stride], pad: c.pad, dataFormat: 'NHWC', dimRoundingMode: undefined };
      // Every route of the filter gradient: our direct kernel, and both routes through the backend's kernels.
      for (const route of ['direct', 'transposed-conv', 'im2col-matmul'] as FilterGradRoute[]) {
        filterGradOptions.route = route;
        try {
          expect(await compare('Conv2DBackpropFilter', { x, dy }, { ...common, filterShape }), route).toBeLessThan(TOLERANCE);
        } finally {
          filterGradOptions.route = 'auto';
        }
      }
      // Both forms of a strided input gradient: by output phase, and over the stride-dilated dy.
      for (const byPhase of [true, false]) {
        inputGradOptions.byPhase = byPhase;
        try {
          expect(await compare('Conv2DBackpropInput', { dy, filter }, { ...common, inputShape: c.xShape }), `byPhase ${byPhase}`).toBeLessThan(TOLERANCE);
        } finally {
          inputGradOptions.byPhase = true;
        }
      }
    });
  }

  for (const c of cases(true)) {
    it(`DepthwiseConv2dNativeBackpropFilter and ...BackpropInput ${c.name}`, async () => {
      const { filterShape, dyShape } = shapesOf(c, true);
      const x = { shape: c.xShape, data: randomArray(tf.util.sizeFromShape(c.xShape), `x ${c.name}`) };
      const dy = { shape: dyShape, data: randomArray(tf.util.sizeFromShape(dyShape), `dy ${c.name}`) };
      const filter = { shape: filterShape, data: randomArray(tf.util.sizeFromShape(filterShape), `f ${c.name}`) };
      const common = { strides: [c.stride, c.stride], pad: c.pad, dilations: [1, 1], dimRoundingMode: undefined };
      expect(await compare('DepthwiseConv2dNativeBackpropFilter', { x, dy }, { ...common, filterShape })).toBeLessThan(TOLERANCE);
      for (const byPhase of [true, false]) {
        inputGradOptions.depthwiseByPhase = byPhase;
        try {
          expect(await compare('DepthwiseConv2dNativeBackpropInput', { dy, filter }, { ...common, inputShape: c.xShape }), `byPhase ${byPhase}`).toBeLessThan(TOLERANCE);
        } finally {
          inputGradOptions.depthwiseByPhase = false;
        }
      }
    });
  }

  // Pools: windows 2 and 3, strides 1 and 2, valid and same; inputs are relu'd so many windows
  // hold ties (all zeros), which the gradient must route exactly as the cpu backend does. Two
  // input shapes: 2×2/2 windows leave the odd last row of the first unread, tile the second; the
  // third has six channels (our WebAssembly kernel's four at a time and the rest one by one) and
  // an odd last column.
  for (const xShape of [
    [2, 9, 8, 3],
    [2, 8, 6, 3],
    [2, 6, 7, 6],
  ])
    for (const size of [2, 3])
      for (const stride of [1, 2])
        for (const pad of ['valid', 'same'] as const) {
          it(`MaxPoolGrad (ours) and AvgPoolGrad (built-in) x${xShape.join('x')} window ${size} stride ${stride} ${pad}`, async () => {
            const name = `pool ${xShape.join('x')} ${size} ${stride} ${pad}`;
            const input = { shape: xShape, data: randomArray(tf.util.sizeFromShape(xShape), `x ${name}`).map((v) => Math.max(0, v)) };
            const info = tf.backend_util.computePool2DInfo(xShape as [number, number, number, number], size, stride, 1, pad);
            const dy = { shape: info.outShape as number[], data: randomArray(tf.util.sizeFromShape(info.outShape), `dy ${name}`) };
            const attrs = { filterSize: [size, size], strides: [stride, stride], pad, dimRoundingMode: undefined };
            await tf.setBackend('cpu');
            const output = tf.tidy(() => {
              const y = tf.maxPool(tf.tensor4d(input.data, xShape as [number, number, number, number]), size, stride, pad);
              return { shape: y.shape as number[], data: y.dataSync() as Float32Array };
            });
            await bothRoutes(maxPoolGradOptions, async (route) => expect(await compare('MaxPoolGrad', { dy, input, output }, attrs), route).toBeLessThan(TOLERANCE));
            expect(await compare('AvgPoolGrad', { dy, input }, attrs)).toBeLessThan(TOLERANCE);
          });
        }

  for (const [aShape, bShape, transposeA, transposeB] of [
    [[1, 7, 5], [1, 5, 3], false, false],
    [[1, 5, 7], [1, 5, 3], true, false],
    [[1, 7, 5], [1, 3, 5], false, true],
    [[2, 5, 7], [2, 3, 5], true, true],
    [[3, 6, 4], [1, 4, 2], false, false],
    // Every block and remainder of our kernels (matmul.c): rows by 4 and 2, columns by 8 and 4, k by 4.
    [[1, 9, 13], [1, 13, 19], false, false],
    [[1, 13, 9], [1, 13, 19], true, false],
    [[1, 9, 13], [1, 19, 13], false, true],
    [[1, 64, 100], [1, 100, 40], false, false],
    [[1, 64, 100], [1, 64, 40], true, false],
    [[1, 64, 40], [1, 100, 40], false, true],
    [[1, 1, 6], [1, 6, 1], false, false],
  ] as Array<[number[], number[], boolean, boolean]>) {
    it(`BatchMatMul ${aShape.join('x')} · ${bShape.join('x')} transposeA=${transposeA} transposeB=${transposeB}`, async () => {
      const a = { shape: aShape, data: randomArray(tf.util.sizeFromShape(aShape), `a ${aShape}`) };
      const b = { shape: bShape, data: randomArray(tf.util.sizeFromShape(bShape), `b ${bShape}`) };
      // Our kernels (single products) and the backend's route.
      await bothRoutes(matMulOptions, async (route) => expect(await compare('BatchMatMul', { a, b }, { transposeA, transposeB }), route).toBeLessThan(TOLERANCE));
    });
  }

  // Sums over leading axes (bias gradients) by our kernel, other Sums by the built-in one.
  for (const [shape, axis, keepDims] of [
    [[16, 7, 7, 16], [0, 1, 2], false],
    [[5, 3], 0, false],
    [[4, 6, 10], [1, 0], true],
    [[9, 6], -2, false],
    [[6, 7], 1, false],
    [[2, 3, 4], [0, 2], false],
  ] as Array<[number[], number | number[], boolean]>) {
    it(`Sum ${shape.join('x')} over ${String(axis)} keepDims=${keepDims}`, async () => {
      const x = { shape, data: randomArray(tf.util.sizeFromShape(shape), `sum ${shape}`) };
      await bothRoutes(leadingSumOptions, async (route) => expect(await compare('Sum', { x }, { axis, keepDims }), route).toBeLessThan(TOLERANCE));
    });
  }

  for (const [shape, reps] of [
    [[1, 1, 1, 16], [64, 14, 14, 1]],
    [[2, 3], [3, 2]],
    [[3, 1, 2], [1, 4, 2]],
    [[5], [3]],
  ] as Array<[number[], number[]]>) {
    it(`Tile ${shape.join('x')} by ${reps.join('x')}`, async () => {
      const x = { shape, data: randomArray(tf.util.sizeFromShape(shape), `tile ${shape}`) };
      expect(await compare('Tile', { x }, { reps })).toBeLessThan(TOLERANCE);
    });
  }

  it('Identity shares its input\'s buffer, which lives until its last tensor goes', async () => {
    await tf.setBackend('wasm');
    const backend = tf.engine().backend;
    const before = backend.numDataIds();
    const x = tf.tensor([1, 2, 3, 4, 5, 6], [2, 3]);
    const y = tf.clone(x);
    expect(backend.numDataIds()).toBe(before + 1);
    x.dispose();
    expect(Array.from(y.dataSync())).toEqual([1, 2, 3, 4, 5, 6]);
    y.dispose();
    expect(backend.numDataIds()).toBe(before);
    // The gradients that save their tensors through clones still match the cpu backend.
    const a = { shape: [4, 5], data: randomArray(20, 'identity a') };
    const b = { shape: [5, 3], data: randomArray(15, 'identity b') };
    const grads = async (name: 'cpu' | 'wasm') => {
      await tf.setBackend(name);
      return tf.tidy(() => {
        const [ga, gb] = tf.grads((p: tf.Tensor, q: tf.Tensor) => tf.relu(tf.matMul(p as tf.Tensor2D, q as tf.Tensor2D)).square().sum())([tf.tensor(a.data, a.shape), tf.tensor(b.data, b.shape)]);
        return [ga!.dataSync(), gb!.dataSync()] as const;
      });
    };
    const [cpuA, cpuB] = await grads('cpu');
    const [wasmA, wasmB] = await grads('wasm');
    expect(relativeError(wasmA, cpuA)).toBeLessThan(TOLERANCE);
    expect(relativeError(wasmB, cpuB)).toBeLessThan(TOLERANCE);
  });

  it('frees every intermediate: tensor and wasm data counts stay flat', async () => {
    await tf.setBackend('wasm');
    const x = tf.tensor(randomArray(2 * 9 * 9 * 3, 'leak x'), [2, 9, 9, 3]);
    const f = tf.tensor(randomArray(3 * 3 * 3 * 4, 'leak f'), [3, 3, 3, 4]);
    const d = tf.tensor(randomArray(3 * 3 * 3 * 2, 'leak d'), [3, 3, 3, 2]);
    const step = () =>
      tf.tidy(() => {
        const g1 = tf.grads((a: tf.Tensor, b: tf.Tensor) => tf.conv2d(a as tf.Tensor4D, b as tf.Tensor4D, 2, 'same').square().sum())([x, f]);
        const g2 = tf.grads((a: tf.Tensor, b: tf.Tensor) => tf.depthwiseConv2d(a as tf.Tensor4D, b as tf.Tensor4D, 1, 'valid').square().sum())([x, d]);
        const g3 = tf.grads((a: tf.Tensor, b: tf.Tensor) => tf.maxPool(tf.conv2d(a as tf.Tensor4D, b as tf.Tensor4D, 1, 'same'), 2, 2, 'valid').square().sum())([x, f]);
        const g4 = tf.grads((a: tf.Tensor, b: tf.Tensor) => tf.matMul(b.reshape([27, 4]), a.reshape([2, 27]), true, true).square().sum())([x.slice([0, 0, 0, 0], [2, 3, 3, 3]), f.slice([0, 0, 0, 0], [3, 3, 3, 4])]);
        const [gamma, beta] = [tf.ones([3]), tf.zeros([3])];
        const g5 = tf.grads((a: tf.Tensor, g: tf.Tensor, b: tf.Tensor) => {
          const [y, mean, variance] = tf.engine().runKernel(BATCH_NORM_TRAINING, { x: a, scale: g, offset: b }, { varianceEpsilon: 1e-3 }) as tf.Tensor[];
          return y!.square().sum().add(mean!.sum()).add(variance!.sum());
        })([x, gamma, beta]);
        return [...g1, ...g2, ...g3, ...g4, ...g5].map((g) => g.sum()).reduce((a, b) => a.add(b)).dataSync();
      });
    step();
    const tensors = tf.memory().numTensors;
    const dataIds = tf.engine().backend.numDataIds();
    for (let i = 0; i < 5; i++) step();
    expect(tf.memory().numTensors).toBe(tensors);
    expect(tf.engine().backend.numDataIds()).toBe(dataIds);
    tf.dispose([x, f, d]);
  });
});
