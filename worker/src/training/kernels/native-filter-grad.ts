import { readFileSync } from 'node:fs';
import type * as tf from '@tensorflow/tfjs';
import type { ConvGeometry } from './conv-gradients.js';

/**
 * The filter gradient as our own WebAssembly kernel (`worker/native/filter-grad.c`, built by
 * `worker/native/build.sh`, committed as `filter-grad.wasm`): it shares the wasm backend's memory
 * and reads x and dy where the backend keeps them, so nothing is copied or repacked. Where the
 * module or the backend's memory is not to be had, {@link nativeFilterGrad} returns null and the
 * caller takes the route through the backend's own kernels.
 */
export const FILTER_GRAD_MODULE = new URL('../../../native/filter-grad.wasm', import.meta.url);

type FilterGradFn = (x: number, dy: number, dw: number, n: number, h: number, w: number, ci: number, oh: number, ow: number, co: number, kh: number, kw: number, sh: number, sw: number, pt: number, pl: number) => void;

// The WebAssembly global, typed as far as it is used here (the project's TypeScript libs do not declare it).
type WasmMemory = { readonly buffer: ArrayBuffer };
const wasmApi = (globalThis as unknown as {
  WebAssembly: {
    Memory: abstract new (...args: never[]) => WasmMemory;
    Module: new (bytes: Uint8Array) => object;
    Instance: new (module: object, imports: object) => { exports: Record<string, unknown> };
  };
}).WebAssembly;

interface WasmHeapBackend {
  wasm?: { asm?: { memory?: unknown } };
  dataIdMap: { get(id: tf.DataId): { memoryOffset: number } | undefined };
  makeOutput(shape: number[], dtype: tf.DataType): tf.TensorInfo;
}

let moduleBytes: Uint8Array | null | undefined;
const instances = new WeakMap<WasmMemory, FilterGradFn>();

function functionFor(memory: WasmMemory): FilterGradFn | null {
  const known = instances.get(memory);
  if (known) return known;
  if (moduleBytes === undefined) {
    try {
      moduleBytes = readFileSync(FILTER_GRAD_MODULE);
    } catch {
      moduleBytes = null;
    }
  }
  if (!moduleBytes) return null;
  const instance = new wasmApi.Instance(new wasmApi.Module(moduleBytes), { env: { memory } });
  const fn = instance.exports['conv2d_filter_grad'] as FilterGradFn;
  instances.set(memory, fn);
  return fn;
}

/** Whether this backend can run the kernel (the wasm backend, with its memory exported, and the module on disk). */
export function nativeFilterGradAvailable(backend: unknown): boolean {
  const memory = (backend as WasmHeapBackend).wasm?.asm?.memory;
  return memory instanceof wasmApi.Memory && functionFor(memory) !== null;
}

/** dW ([KH, KW, Ci, Co], a new tensor of the backend) of NHWC x and dy, dilation 1; null where the kernel is not available. */
export function nativeFilterGrad(backend: unknown, x: tf.TensorInfo, dy: tf.TensorInfo, g: ConvGeometry): tf.TensorInfo | null {
  const heap = backend as WasmHeapBackend;
  const memory = heap.wasm?.asm?.memory;
  if (!(memory instanceof wasmApi.Memory) || x.dtype !== 'float32' || dy.dtype !== 'float32') return null;
  const fn = functionFor(memory);
  if (!fn) return null;
  const co = dy.shape[3]!;
  const out = heap.makeOutput([g.filterHeight, g.filterWidth, g.inChannels, co], 'float32');
  // Offsets after the allocation (it may grow the memory; offsets stay valid, views would not).
  const offset = (t: tf.TensorInfo) => heap.dataIdMap.get(t.dataId)!.memoryOffset;
  fn(offset(x), offset(dy), offset(out), g.batch, g.inHeight, g.inWidth, g.inChannels, g.outHeight, g.outWidth, co, g.filterHeight, g.filterWidth, g.strides[0], g.strides[1], g.padTop, g.padLeft);
  return out;
}
