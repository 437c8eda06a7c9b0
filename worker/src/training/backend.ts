import { fileURLToPath } from 'node:url';
import * as tf from '@tensorflow/tfjs';
import { InternalError, NetbreederError, type BackendName } from '@netbreeder/shared-types';
import { registerWasmTrainingKernels } from './kernels/register-wasm-kernels.js';
import { KERNELS_MODULE, nativeKernels } from './kernels/native-kernels.js';

/** Options of {@link initBackend}. */
export interface InitBackendOptions {
  /**
   * Backends to try, in order; the first that initialises wins.
   * @default ['tensorflow', 'wasm', 'cpu']
   */
  prefer?: BackendName[];
}

/** The backend training runs on, and a sentence saying what was tried and why each was passed over. */
export interface BackendChoice {
  backend: BackendName;
  reason: string;
}

const DEFAULT_ORDER: BackendName[] = ['tensorflow', 'wasm', 'cpu'];
let chosen: Promise<BackendChoice> | null = null;

const message = (err: unknown) => (err instanceof Error ? err.message.split('\n')[0]! : String(err));

async function tryTensorflow(): Promise<void> {
  // The native binding is an optional dependency that often fails to install (its install script
  // downloads libtensorflow); the name sits in a variable so no bundler or typechecker insists on it.
  const nativeModule = '@tensorflow/tfjs-node';
  await import(nativeModule);
  if (!(await tf.setBackend('tensorflow'))) throw new NetbreederError('NB_BACKEND_UNAVAILABLE', 'the tensorflow backend did not initialise');
}

async function tryWasm(): Promise<void> {
  // Importing the package registers the backend factory; in Node it loads the SIMD .wasm file from
  // its own dist folder (no download).
  await import('@tensorflow/tfjs-backend-wasm');
  if (!(await tf.setBackend('wasm'))) throw new NetbreederError('NB_BACKEND_UNAVAILABLE', 'the wasm backend did not initialise');
  registerWasmTrainingKernels();
}

async function tryCpu(): Promise<void> {
  if (!(await tf.setBackend('cpu'))) throw new NetbreederError('NB_BACKEND_UNAVAILABLE', 'the cpu backend did not initialise');
}

/** Whether our WebAssembly kernels (worker/native/kernels.wasm) run in this backend, or why training is slower without them. */
function ownModuleNote(): string {
  return nativeKernels(tf.findBackend('wasm')) ? 'our WebAssembly kernels loaded' : `our WebAssembly kernels not loaded (${fileURLToPath(KERNELS_MODULE)} missing or unreadable), so slower routes are used`;
}

const TRY: Record<BackendName, () => Promise<void>> = { tensorflow: tryTensorflow, wasm: tryWasm, cpu: tryCpu };

async function choose(order: BackendName[]): Promise<BackendChoice> {
  const passed: string[] = [];
  for (const name of order) {
    try {
      await TRY[name]();
      await tf.ready();
      const notes = name === 'wasm' ? ` (SIMD ${tf.env().getBool('WASM_HAS_SIMD_SUPPORT') ? 'on' : 'off'}, our gradient kernels registered, ${ownModuleNote()})` : '';
      const reason = passed.length ? `${passed.join('; ')}; using ${name}${notes}` : `using ${name}${notes}, the first choice`;
      return { backend: name, reason };
    } catch (err) {
      passed.push(`${name} unavailable: ${message(err)}`);
    }
  }
  throw new NetbreederError('NB_BACKEND_UNAVAILABLE', `no TensorFlow.js backend initialised (${passed.join('; ')}); reinstall @tensorflow/tfjs`);
}

/**
 * Picks the fastest available TensorFlow.js backend: `@tensorflow/tfjs-node` when installed, else
 * wasm (with our gradient kernels registered), else cpu. Idempotent: later calls return the first
 * call's choice whatever their options.
 */
export function initBackend(options: InitBackendOptions = {}): Promise<BackendChoice> {
  if (!chosen) {
    // TensorFlow.js's own notes (in Node, a banner urging the native backend) stay off our output.
    tf.env().set('PROD', true);
    chosen = choose(options.prefer?.length ? options.prefer : DEFAULT_ORDER);
    chosen.catch(() => {
      chosen = null;
    });
  }
  return chosen;
}

/** The backend name TensorFlow.js is using now, as a {@link BackendName}. */
export function currentBackend(): BackendName {
  const name = tf.getBackend();
  if (name === 'tensorflow' || name === 'wasm' || name === 'cpu') return name;
  throw new InternalError(`TensorFlow.js is on backend '${name}', which training does not support; call initBackend() first`);
}

/**
 * The backend choice as one informative line: the native binding is optional (its install script
 * downloads), so its absence is normal and said as such, not as an error.
 */
export function backendSentence(choice: BackendChoice): string {
  const detail = choice.reason.match(/using \w+( \(.*\))?/)?.[1] ?? '';
  const nativeMissing = /tensorflow unavailable: Cannot find (package|module) '@tensorflow\/tfjs-node'/.test(choice.reason);
  if (choice.backend === 'tensorflow') return 'training on the native TensorFlow backend';
  if (nativeMissing && choice.backend === 'wasm') return `training on the wasm backend${detail}; the optional native backend (@tensorflow/tfjs-node) is not installed, which is fine`;
  return `training on the ${choice.backend} backend: ${choice.reason}`;
}
