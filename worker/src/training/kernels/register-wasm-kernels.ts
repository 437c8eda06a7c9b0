import * as tf from '@tensorflow/tfjs';
import { maxPoolGrad } from './max-pool-grad.js';
import { conv2dBackpropFilter, conv2dBackpropInput, depthwiseBackpropFilter, depthwiseBackpropInput } from './conv-gradients.js';

/** Which of our kernels are registered for wasm, and which built-in ones they replaced. */
export interface WasmKernelRegistration {
  /** Kernels the backend lacked, now provided by us. */
  added: string[];
  /** Built-in kernels replaced by a faster implementation of ours. */
  replaced: string[];
}

/** Our kernels, by name. `replaces` marks a kernel wasm already has, whose built-in is slower or wrong. */
const KERNELS: Array<{ name: string; kernelFunc: tf.KernelFunc; replaces: boolean }> = [
  { name: 'Conv2DBackpropFilter', kernelFunc: conv2dBackpropFilter as unknown as tf.KernelFunc, replaces: false },
  { name: 'DepthwiseConv2dNativeBackpropFilter', kernelFunc: depthwiseBackpropFilter as unknown as tf.KernelFunc, replaces: false },
  { name: 'DepthwiseConv2dNativeBackpropInput', kernelFunc: depthwiseBackpropInput as unknown as tf.KernelFunc, replaces: false },
  { name: 'Conv2DBackpropInput', kernelFunc: conv2dBackpropInput as unknown as tf.KernelFunc, replaces: true },
  { name: 'MaxPoolGrad', kernelFunc: maxPoolGrad as unknown as tf.KernelFunc, replaces: true },
];

/** The names {@link registerWasmTrainingKernels} registers, for tests and docs. */
export const WASM_TRAINING_KERNELS: readonly string[] = KERNELS.map((k) => k.name);

const ours = new Set<tf.KernelFunc>(KERNELS.map((k) => k.kernelFunc));
const builtIns = new Map<string, tf.KernelConfig>();

/**
 * Registers the gradient kernels the wasm backend lacks (and the faster replacements of slow
 * built-in ones) with TensorFlow.js's kernel registry, for backend name 'wasm'. Explicit, never an
 * import side effect; calling it again changes nothing.
 */
export function registerWasmTrainingKernels(): WasmKernelRegistration {
  const result: WasmKernelRegistration = { added: [], replaced: [] };
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
    tf.registerKernel({ kernelName: k.name, backendName: 'wasm', kernelFunc: k.kernelFunc });
  }
  return result;
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
