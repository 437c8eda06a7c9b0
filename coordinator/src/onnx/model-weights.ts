import { NetbreederError, type ModelArtifactsMessage } from '@netbreeder/shared-types';

/** One trained weight: its TensorFlow.js shape and values. */
export interface NamedWeight {
  shape: number[];
  values: Float32Array;
}

/**
 * The weights of a TensorFlow.js layers model, by name (`layer/kernel`, `layer/bias`,
 * `layer/gamma` …), read from the artifacts' weight specs and concatenated float32 buffer.
 * Throws when a weight is not float32 or the buffer is shorter than the specs say.
 */
export function weightsOfArtifacts(artifacts: Pick<ModelArtifactsMessage, 'weightSpecs' | 'weightDataBase64'>): Map<string, NamedWeight> {
  const bytes = Buffer.from(artifacts.weightDataBase64, 'base64');
  const weights = new Map<string, NamedWeight>();
  let offset = 0;
  for (const spec of artifacts.weightSpecs) {
    if (spec.dtype !== 'float32') throw new NetbreederError('NB_ONNX_EXPORT', `weight ${spec.name} is ${spec.dtype}; the ONNX export reads float32 weights only`);
    const count = spec.shape.reduce((a, b) => a * b, 1);
    const end = offset + count * 4;
    if (end > bytes.length) throw new NetbreederError('NB_ONNX_EXPORT', `weight ${spec.name} needs bytes ${offset}–${end} but the weight buffer holds ${bytes.length}; the model's artifacts are damaged`);
    const values = new Float32Array(count);
    Buffer.from(values.buffer).set(bytes.subarray(offset, end));
    weights.set(spec.name, { shape: [...spec.shape], values });
    offset = end;
  }
  return weights;
}
