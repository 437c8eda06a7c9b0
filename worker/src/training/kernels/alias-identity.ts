import type * as tf from '@tensorflow/tfjs';

/** Whether Identity aliases its input; for the benchmark's comparisons. */
export const identityOptions = { alias: true };

/**
 * Identity for wasm without a copy: the output shares the input's buffer, its reference count
 * raised, as the backend's own Reshape does. The built-in kernel allocates and copies the whole
 * tensor, and the engine runs it for every tensor a gradient saves for the backward pass (each
 * convolution's input and output, every activation: megabytes per step for a small CNN). Safe
 * because no kernel of the backend or of ours writes into an input; a buffer is freed when its
 * last tensor goes. Strings (kept in JavaScript) go to the built-in kernel.
 */
export function makeAliasIdentity(builtIn: tf.KernelFunc): tf.KernelFunc {
  return (args) => {
    const { x } = args.inputs as { x: tf.TensorInfo };
    if (!identityOptions.alias || x.dtype === 'string') return builtIn(args);
    (args.backend as { incRef(dataId: tf.DataId): void }).incRef(x.dataId);
    return { dataId: x.dataId, shape: x.shape.slice(), dtype: x.dtype };
  };
}
