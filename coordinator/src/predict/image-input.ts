import { readdir } from 'node:fs/promises';
import { join, relative } from 'node:path';
import type { ImageSteps } from '@netbreeder/shared-types';
import { DatasetError } from '../datasets/dataset-error.js';
import { decodeImage } from '../importers/image-decode.js';
import { writeModelPixels } from '../importers/image-pixels.js';
import { PredictError } from './predict-error.js';

const IMAGE_NAME = /\.(png|jpe?g)$/i;
const collator = new Intl.Collator('en', { numeric: true });

/** Every PNG or JPEG below `folder` (sub-folders included, hidden entries skipped), as paths relative to it, sorted. */
export async function listImages(folder: string): Promise<string[]> {
  const found: string[] = [];
  const walk = async (dir: string): Promise<void> => {
    const entries = await readdir(dir, { withFileTypes: true });
    for (const e of entries.sort((a, b) => collator.compare(a.name, b.name))) {
      if (e.name.startsWith('.')) continue;
      if (e.isDirectory()) await walk(join(dir, e.name));
      else if (e.isFile() && IMAGE_NAME.test(e.name)) found.push(relative(folder, join(dir, e.name)));
    }
  };
  await walk(folder);
  return found;
}

/**
 * One image file's bytes as model input (`height × width × channels` values), decoded and
 * converted by the image importer's own functions. An export that does not resize (`resize:
 * "none"`) refuses an image of another size. Pure: `file` only names the input in errors.
 */
export function imageInput(bytes: Uint8Array, file: string, steps: ImageSteps): Float32Array {
  let image;
  try {
    image = decodeImage(bytes, file);
  } catch (err) {
    if (err instanceof DatasetError) throw new PredictError('NB_PREDICT_BAD_IMAGE', err.message);
    throw err;
  }
  if (steps.resize === 'none' && (image.width !== steps.width || image.height !== steps.height)) {
    throw new PredictError(
      'NB_PREDICT_BAD_IMAGE',
      `${file} is ${image.width}×${image.height} pixels but the model was trained on ${steps.width}×${steps.height} images without resizing; resize it to ${steps.width}×${steps.height}`,
    );
  }
  const out = new Float32Array(steps.width * steps.height * steps.channels);
  const method = steps.resize === 'none' ? 'area' : steps.resize;
  writeModelPixels(image.rgba, image.width, image.height, { width: steps.width, height: steps.height, channels: steps.channels, method }, out, 0);
  return out;
}
