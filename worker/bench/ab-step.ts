/**
 * A/B comparison of kernel choices on whole training steps, interleaved in one process so that
 * load from other processes on a shared machine hits both sides alike. Reports the median CPU
 * time per step of each variant.
 *
 *   npx tsx --conditions=source worker/bench/ab-step.ts ref-cnn
 */
import type { DataShape, Genome } from '@netbreeder/shared-types';
import { initBackend } from '../src/training/backend.js';
import { filterGradOptions } from '../src/training/kernels/conv-filter-gradient.js';
import { ADAM_UPDATE, adamUpdateOptions } from '../src/training/kernels/adam-update.js';
import { matMulOptions } from '../src/training/kernels/batch-mat-mul.js';
import { maxPoolGradOptions } from '../src/training/kernels/max-pool-grad.js';
import { leadingSumOptions } from '../src/training/kernels/leading-sum.js';
import { conv2dOptions } from '../src/training/kernels/direct-conv2d.js';
import { identityOptions } from '../src/training/kernels/alias-identity.js';
import { CROSS_ENTROPY } from '../src/training/kernels/cross-entropy.js';
import { BATCH_NORM_TRAINING } from '../src/training/kernels/batch-norm-training.js';
import { setWasmKernelOverride } from '../src/training/kernels/register-wasm-kernels.js';
import { chainGenome, refCnn, refCnnBn, refMlp, refSkipBn } from '../src/training/reference-genomes.js';
import { fixedBatchStep } from './fixed-batch-step.js';

const which = process.argv[2] ?? 'ref-cnn';
const table: Record<string, [Genome, DataShape]> = {
  'ref-mlp': [refMlp(), { inputShape: [784], numClasses: 10 }],
  'ref-cnn': [refCnn(), { inputShape: [28, 28, 1], numClasses: 10 }],
  'skip-bn': [refSkipBn(), { inputShape: [28, 28, 1], numClasses: 10 }],
  'cnn-bn': [refCnnBn(), { inputShape: [28, 28, 1], numClasses: 10 }],
  'pointwise': [
    chainGenome([
      { id: 'c1', kind: 'conv2d', filters: 16, kernelSize: 3, strides: 2, padding: 'same', activation: 'relu' },
      { id: 'c2', kind: 'conv2d', filters: 32, kernelSize: 1, strides: 1, padding: 'same', activation: 'relu' },
      { id: 'c3', kind: 'conv2d', filters: 32, kernelSize: 1, strides: 1, padding: 'same', activation: 'relu' },
      { id: 'g', kind: 'global-avg-pool' },
    ]),
    { inputShape: [28, 28, 3], numClasses: 10 },
  ],
};
const [genome, data] = table[which]!;
await initBackend({ prefer: ['wasm'] });

const variants: Array<{ name: string; on: () => void; off: () => void }> = [
  { name: 'all ours (auto)', on: () => {}, off: () => {} },
  { name: 'filter grad: transposed-conv always (not ours)', on: () => (filterGradOptions.route = 'transposed-conv'), off: () => (filterGradOptions.route = 'auto') },
  { name: 'built-in Conv2DBackpropInput', on: () => setWasmKernelOverride('Conv2DBackpropInput', false), off: () => setWasmKernelOverride('Conv2DBackpropInput', true) },
  { name: 'max-pool gradient in JavaScript', on: () => (maxPoolGradOptions.direct = false), off: () => (maxPoolGradOptions.direct = true) },
  { name: 'built-in MaxPoolGrad (wrong for 2×2)', on: () => setWasmKernelOverride('MaxPoolGrad', false), off: () => setWasmKernelOverride('MaxPoolGrad', true) },
  { name: 'matrix products by the backend (not ours)', on: () => (matMulOptions.direct = false), off: () => (matMulOptions.direct = true) },
  { name: 'bias-gradient sums by the backend (not ours)', on: () => (leadingSumOptions.direct = false), off: () => (leadingSumOptions.direct = true) },
  { name: 'composed loss (not ours)', on: () => setWasmKernelOverride(CROSS_ENTROPY, false), off: () => setWasmKernelOverride(CROSS_ENTROPY, true) },
  { name: 'Identity copies (built-in)', on: () => (identityOptions.alias = false), off: () => (identityOptions.alias = true) },
  { name: 'forward convolutions by the backend (not ours)', on: () => (conv2dOptions.direct = false), off: () => (conv2dOptions.direct = true) },
  { name: 'built-in BatchMatMul', on: () => setWasmKernelOverride('BatchMatMul', false), off: () => setWasmKernelOverride('BatchMatMul', true) },
  { name: "library's batch-norm ops", on: () => setWasmKernelOverride(BATCH_NORM_TRAINING, false), off: () => setWasmKernelOverride(BATCH_NORM_TRAINING, true) },
  { name: 'Adam update in JavaScript', on: () => (adamUpdateOptions.direct = false), off: () => (adamUpdateOptions.direct = true) },
  { name: "library's Adam update", on: () => setWasmKernelOverride(ADAM_UPDATE, false), off: () => setWasmKernelOverride(ADAM_UPDATE, true) },
];
const only = process.argv.slice(3);
const chosen = only.length ? variants.filter((v, i) => i === 0 || only.some((o) => v.name.includes(o))) : variants;

const batch = 64;
const step = fixedBatchStep(genome, data, batch);
const times = new Map<string, number[]>(chosen.map((v) => [v.name, []]));
for (let round = 0; round < 8; round++) {
  for (const v of chosen) {
    v.on();
    step();
    const c0 = process.cpuUsage();
    for (let i = 0; i < 4; i++) step();
    const c = process.cpuUsage(c0);
    v.off();
    times.get(v.name)!.push((c.user + c.system) / 1000 / 4);
  }
}
const median = (a: number[]) => [...a].sort((p, q) => p - q)[Math.floor(a.length / 2)]!;
for (const [name, t] of times) console.log(`${which} ${name.padEnd(40)} ${median(t).toFixed(1).padStart(7)} ms CPU/step  ${((batch / median(t)) * 1000).toFixed(0).padStart(6)} samples per CPU-second`);
