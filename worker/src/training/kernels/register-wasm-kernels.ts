import * as tf from '@tensorflow/tfjs';
import { makeBatchMatMul } from './batch-mat-mul.js';
import { BATCH_NORM_TRAINING, BATCH_NORM_TRAINING_GRAD, batchNormTraining, batchNormTrainingGrad, batchNormTrainingGradConfig } from './batch-norm-training.js';
import { maxPoolGrad } from './max-pool-grad.js';
import { ADAM_UPDATE, adamUpdateKernel } from './adam-update.js';
import { makeTile } from './tile.js';
import { makeSum } from './leading-sum.js';
import { makeConv2D } from './direct-conv2d.js';
import { makeAliasIdentity } from './alias-identity.js';
import { CROSS_ENTROPY, CROSS_ENTROPY_GRAD, crossEntropyGradConfig, crossEntropyGradKernel, crossEntropyKernel } from './cross-entropy.js';
import { conv2dBackpropInput, depthwiseBackpropFilter, depthwiseBackpropInput } from './conv-gradients.js';
import { conv2dBackpropFilter } from './conv-filter-gradient.js';
import { InternalError, NetbreederError } from '@netbreeder/shared-types';

/** Which of our kernels are registered for wasm, and which built-in ones they replaced. */
export interface WasmKernelRegistration {
  /** Kernels the backend lacked, now provided by us. */
  added: string[];
  /** Built-in kernels replaced by a faster implementation of ours. */
  replaced: string[];
}

/**
 * Our kernels, by name: `kernelFunc` for kernels that stand alone, `wrap` for replacements that
 * fall back on (or build on) the built-in kernel they replace.
 */
const KERNELS: Array<{ name: string; kernelFunc?: tf.KernelFunc; wrap?: (builtIn: tf.KernelFunc) => tf.KernelFunc; optional?: true }> = [
  // Missing in wasm.
  { name: 'Conv2DBackpropFilter', kernelFunc: conv2dBackpropFilter as unknown as tf.KernelFunc },
  { name: 'DepthwiseConv2dNativeBackpropFilter', kernelFunc: depthwiseBackpropFilter as unknown as tf.KernelFunc },
  { name: 'DepthwiseConv2dNativeBackpropInput', kernelFunc: depthwiseBackpropInput as unknown as tf.KernelFunc },
  // Present in wasm but slow (Conv2DBackpropInput, BatchMatMul with a transposed operand, Tile, Sum over leading axes, Conv2D with a new filter) or wrong (MaxPoolGrad, 2×2 windows).
  { name: 'Conv2DBackpropInput', kernelFunc: conv2dBackpropInput as unknown as tf.KernelFunc },
  { name: 'MaxPoolGrad', kernelFunc: maxPoolGrad as unknown as tf.KernelFunc },
  { name: 'BatchMatMul', wrap: makeBatchMatMul },
  { name: 'Tile', wrap: makeTile },
  { name: 'Sum', wrap: makeSum },
  { name: 'Conv2D', wrap: makeConv2D },
  // Present in wasm but copies: the engine clones every tensor a gradient saves.
  { name: 'Identity', wrap: makeAliasIdentity },
  // Our own: batch norm in training mode, which ChannelBatchNorm runs where these exist.
  // Optional: without them the layer runs the library's ops.
  { name: BATCH_NORM_TRAINING, kernelFunc: batchNormTraining, optional: true },
  { name: BATCH_NORM_TRAINING_GRAD, kernelFunc: batchNormTrainingGrad },
  // Our own: one Adam update per weight tensor, which FusedAdamOptimizer runs where it exists.
  { name: ADAM_UPDATE, kernelFunc: adamUpdateKernel, optional: true },
  // Our own: the training loss and its gradient, which trainingCrossEntropy runs where they exist.
  { name: CROSS_ENTROPY, kernelFunc: crossEntropyKernel, optional: true },
  { name: CROSS_ENTROPY_GRAD, kernelFunc: crossEntropyGradKernel },
];

/** The names {@link registerWasmTrainingKernels} registers, for tests and docs. */
export const WASM_TRAINING_KERNELS: readonly string[] = KERNELS.map((k) => k.name);

const ours = new Set<tf.KernelFunc>();
const builtIns = new Map<string, tf.KernelConfig>();

/**
 * Registers the gradient kernels the wasm backend lacks (and the faster replacements of slow
 * built-in ones) with TensorFlow.js's kernel registry, for backend name 'wasm'. Explicit, never an
 * import side effect; calling it again changes nothing.
 */
export function registerWasmTrainingKernels(): WasmKernelRegistration {
  const result: WasmKernelRegistration = { added: [], replaced: [] };
  // Gradients are registered per kernel name, for every backend; the forward kernel exists on wasm only.
  if (tf.getGradient(BATCH_NORM_TRAINING) == null) tf.registerGradient(batchNormTrainingGradConfig);
  if (tf.getGradient(CROSS_ENTROPY) == null) tf.registerGradient(crossEntropyGradConfig);
  for (const k of KERNELS) {
    const existing = tf.getKernel(k.name, 'wasm');
    if (existing && ours.has(existing.kernelFunc)) continue;
    if (existing) {
      builtIns.set(k.name, existing);
      tf.unregisterKernel(k.name, 'wasm');
      result.replaced.push(k.name);
    } else {
      result.added.push(k.name);
    }
    const kernelFunc = k.kernelFunc ?? k.wrap!(existing ? existing.kernelFunc : missing(k.name));
    ours.add(kernelFunc);
    registered.set(k.name, kernelFunc);
    tf.registerKernel({ kernelName: k.name, backendName: 'wasm', kernelFunc });
  }
  return result;
}

const missing = (name: string): tf.KernelFunc => () => {
  throw new NetbreederError('NB_BACKEND_UNAVAILABLE', `the wasm backend has no built-in ${name} kernel to build on; check the @tensorflow/tfjs-backend-wasm version (4.22 expected)`);
};

const registered = new Map<string, tf.KernelFunc>();

/**
 * Switches one of our replacement kernels off (back to the built-in) or on again, for the
 * benchmark's comparisons; likewise an optional kernel of ours (off: not registered, so its
 * caller takes its other route). Kernels wasm lacks cannot be switched off.
 */
export function setWasmKernelOverride(name: string, enabled: boolean): void {
  const builtIn = builtIns.get(name);
  const mine = registered.get(name);
  const optional = KERNELS.find((k) => k.name === name)?.optional === true;
  if (!mine || (!builtIn && !optional)) throw new InternalError(`${name} is neither one of our replacements of a built-in wasm kernel nor an optional kernel of ours; call registerWasmTrainingKernels() first`);
  if (tf.getKernel(name, 'wasm')) tf.unregisterKernel(name, 'wasm');
  if (enabled) tf.registerKernel({ kernelName: name, backendName: 'wasm', kernelFunc: mine });
  else if (builtIn) tf.registerKernel(builtIn);
}

/** Puts back the built-in kernels we replaced and removes the ones we added (for comparisons in benchmarks). */
export function unregisterWasmTrainingKernels(options: { keepAdded?: boolean } = {}): void {
  for (const k of KERNELS) {
    const existing = tf.getKernel(k.name, 'wasm');
    if (!existing || !ours.has(existing.kernelFunc)) continue;
    const builtIn = builtIns.get(k.name);
    if (!builtIn && options.keepAdded) continue;
    tf.unregisterKernel(k.name, 'wasm');
    if (builtIn) tf.registerKernel(builtIn);
  }
}
