import type { IdxSteps } from '@netbreeder/shared-types';
import { DatasetError } from '../datasets/dataset-error.js';
import { idxFeatures, readIdxFile } from '../importers/idx-files.js';
import { PredictError } from './predict-error.js';

/**
 * The samples of an IDX file as model input, converted by the IDX importer's own
 * {@link idxFeatures}. Refuses samples of another type or shape than the training samples.
 */
export async function idxInput(file: string, steps: IdxSteps): Promise<{ features: Float32Array; count: number }> {
  let samples;
  try {
    samples = await readIdxFile(file);
  } catch (err) {
    if (err instanceof DatasetError) throw new PredictError('NB_PREDICT_BAD_IDX', err.message);
    throw err;
  }
  const rest = samples.dims.slice(1);
  const shape = rest.length === 2 ? [rest[0]!, rest[1]!, 1] : rest;
  if (samples.typeCode !== steps.typeCode || shape.join(',') !== steps.sampleShape.join(',')) {
    throw new PredictError(
      'NB_PREDICT_BAD_IDX',
      `${file} holds samples of type 0x${samples.typeCode.toString(16).padStart(2, '0')} and shape [${shape.join(', ')}], but the model was trained on type 0x${steps.typeCode.toString(16).padStart(2, '0')} and shape [${steps.sampleShape.join(', ')}]; give it samples of that kind`,
    );
  }
  return { features: idxFeatures(samples, steps.scale === 'divide-255'), count: samples.dims[0]! };
}
