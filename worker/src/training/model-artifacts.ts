import * as tf from '@tensorflow/tfjs';
import { InternalError, type ModelArtifactsMessage } from '@netbreeder/shared-types';

/** Serialises a trained model to the message form (layers topology, weight specs, base64 weights). */
export async function modelToMessage(model: tf.LayersModel): Promise<ModelArtifactsMessage> {
  let saved: tf.io.ModelArtifacts | null = null;
  await model.save(
    tf.io.withSaveHandler(async (artifacts) => {
      saved = artifacts;
      return { modelArtifactsInfo: { dateSaved: new Date(), modelTopologyType: 'JSON' } };
    }),
  );
  const artifacts = saved as tf.io.ModelArtifacts | null;
  if (!artifacts?.modelTopology || !artifacts.weightSpecs || artifacts.weightData == null) {
    throw new InternalError('the model did not serialise its topology and weights; this is a bug in the training engine');
  }
  const weightData = artifacts.weightData;
  const bytes = Array.isArray(weightData) ? tf.io.concatenateArrayBuffers(weightData) : weightData;
  return {
    modelTopology: artifacts.modelTopology as Record<string, unknown>,
    weightSpecs: artifacts.weightSpecs.map((s) => ({ name: s.name, shape: s.shape, dtype: s.dtype })),
    weightDataBase64: Buffer.from(bytes).toString('base64'),
  };
}

/** The TensorFlow.js artifacts inside a message, ready for `tf.io.fromMemory`. */
export function artifactsFromMessage(message: ModelArtifactsMessage): tf.io.ModelArtifacts {
  const bytes = Buffer.from(message.weightDataBase64, 'base64');
  const weightData = bytes.buffer.slice(bytes.byteOffset, bytes.byteOffset + bytes.byteLength) as ArrayBuffer;
  return {
    modelTopology: message.modelTopology as tf.io.ModelArtifacts['modelTopology'],
    weightSpecs: message.weightSpecs as tf.io.WeightsManifestEntry[],
    weightData,
    format: 'layers-model',
  };
}

/** Rebuilds a trained model from its message (for scoring the held-out test split or exporting). */
export async function loadModelFromMessage(message: ModelArtifactsMessage): Promise<tf.LayersModel> {
  return tf.loadLayersModel(tf.io.fromMemory(artifactsFromMessage(message)));
}
