import { readFileSync } from 'node:fs';
import type * as tf from '@tensorflow/tfjs';

/**
 * Our own WebAssembly SIMD kernels (`worker/native/*.c`, built by `worker/native/build.sh` into
 * the committed `kernels.wasm`). The module imports the wasm backend's memory, so a kernel reads
 * its inputs and writes its outputs where the backend keeps tensors: nothing is copied. Where the
 * module or the backend's memory is not to be had, {@link nativeKernels} returns null and the
 * callers take their routes through the backend's own kernels or JavaScript.
 */
export const KERNELS_MODULE = new URL('../../../native/kernels.wasm', import.meta.url);

export interface NativeKernels {
  /** filter-grad.c: dW [KH, KW, Ci, Co] of NHWC x and dy, dilation 1 (byte offsets, then the geometry). */
  conv2d_filter_grad(x: number, dy: number, dw: number, n: number, h: number, w: number, ci: number, oh: number, ow: number, co: number, kh: number, kw: number, sh: number, sw: number, pt: number, pl: number): void;
  /** conv2d.c: y [N, OH, OW, Co] of NHWC x and filter [KH, KW, Ci, Co], dilation 1 (byte offsets, then the geometry). */
  conv2d_forward(x: number, f: number, y: number, n: number, h: number, w: number, ci: number, oh: number, ow: number, co: number, kh: number, kw: number, sh: number, sw: number, pt: number, pl: number): void;
  /** matmul.c: c[M, N] = A · b, b row-major [K, N], A's element (i, k) at a[i·sai + k·sak]. */
  matmul_rows(a: number, b: number, c: number, m: number, k: number, n: number, sai: number, sak: number): void;
  /** matmul.c: c[M, N] = a · bᵀ, a row-major [M, K], b stored [N, K]. */
  matmul_dots(a: number, b: number, c: number, m: number, k: number, n: number): void;
  /** max-pool-grad.c: dx of a 2×2, stride-2, unpadded max pool (NHWC), given x, the forward output y and dy. */
  max_pool_grad_2x2(x: number, y: number, dy: number, dx: number, n: number, h: number, w: number, c: number, oh: number, ow: number): void;
  /** leading-sum.c: out[cols] = the sum of x [rows, cols] over its rows, in float64 (acc: cols doubles of scratch). */
  leading_sum(x: number, out: number, acc: number, rows: number, cols: number): void;
  /** adam-update.c: one Adam update of `count` weights (byte offsets, then the constants). */
  adam_update(value: number, m: number, v: number, g: number, outValue: number, outM: number, outV: number, count: number, b1: number, b2: number, c1: number, c2: number, step: number, root: number, eps: number): void;
}

// The WebAssembly global, typed as far as it is used here (the project's TypeScript libs do not declare it).
type WasmMemory = { readonly buffer: ArrayBuffer };
const wasmApi = (globalThis as unknown as {
  WebAssembly: {
    Memory: abstract new (...args: never[]) => WasmMemory;
    Module: new (bytes: Uint8Array) => object;
    Instance: new (module: object, imports: object) => { exports: Record<string, unknown> };
  };
}).WebAssembly;

/** The part of the wasm backend the kernels use. */
export interface WasmHeapBackend {
  wasm?: { asm?: { memory?: unknown } };
  dataIdMap: { get(id: tf.DataId): { memoryOffset: number } | undefined };
  makeOutput(shape: number[], dtype: tf.DataType): tf.TensorInfo;
}

let moduleBytes: Uint8Array | null | undefined;
const instances = new WeakMap<WasmMemory, NativeKernels | null>();

/** Our kernels bound to this backend's memory (one instance per memory), or null where they cannot run. */
export function nativeKernels(backend: unknown): NativeKernels | null {
  const memory = (backend as WasmHeapBackend).wasm?.asm?.memory;
  if (!(memory instanceof wasmApi.Memory)) return null;
  const known = instances.get(memory);
  if (known !== undefined) return known;
  if (moduleBytes === undefined) {
    try {
      moduleBytes = readFileSync(KERNELS_MODULE);
    } catch {
      moduleBytes = null;
    }
  }
  if (!moduleBytes) return null;
  let kernels: NativeKernels | null;
  try {
    kernels = new wasmApi.Instance(new wasmApi.Module(moduleBytes), { env: { memory } }).exports as unknown as NativeKernels;
  } catch {
    kernels = null; // a module this memory cannot take (a changed backend build): the slower routes
  }
  instances.set(memory, kernels);
  return kernels;
}

/** Where the backend keeps a tensor's data (a byte offset into its memory). Read after every allocation: offsets stay valid when the memory grows, views of it do not. */
export function heapOffset(backend: unknown, t: tf.TensorInfo): number {
  return (backend as WasmHeapBackend).dataIdMap.get(t.dataId)!.memoryOffset;
}
