import jpeg from 'jpeg-js';
import { PNG } from 'pngjs';
import { DatasetError } from '../datasets/dataset-error.js';

/** A decoded image: 4 bytes (R, G, B, A) per pixel, row-major. */
export interface DecodedImage {
  width: number;
  height: number;
  rgba: Uint8Array;
}

const isPng = (b: Uint8Array): boolean => b.length >= 8 && b[0] === 0x89 && b[1] === 0x50 && b[2] === 0x4e && b[3] === 0x47;
const isJpeg = (b: Uint8Array): boolean => b.length >= 3 && b[0] === 0xff && b[1] === 0xd8 && b[2] === 0xff;

/** Largest image side accepted, so a broken header cannot ask for gigabytes. */
export const MAX_IMAGE_SIDE = 8192;

/**
 * Decodes PNG or JPEG bytes (told apart by their signature, not the file name) with pure-JS
 * decoders. No I/O: `file` only names the input in errors. Throws a {@link DatasetError}
 * (`NB_DATASET_BAD_IMAGE`) for an empty file, another format, or bytes the decoder refuses.
 */
export function decodeImage(bytes: Uint8Array, file: string): DecodedImage {
  if (bytes.length === 0) throw new DatasetError('NB_DATASET_BAD_IMAGE', `${file} is empty (0 bytes); replace or remove it`, { file });
  let image: DecodedImage;
  try {
    if (isPng(bytes)) {
      const png = PNG.sync.read(Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength));
      image = { width: png.width, height: png.height, rgba: new Uint8Array(png.data.buffer, png.data.byteOffset, png.data.byteLength) };
    } else if (isJpeg(bytes)) {
      const jpg = jpeg.decode(bytes, { useTArray: true, formatAsRGBA: true, maxMemoryUsageInMB: 256, maxResolutionInMP: 64 });
      image = { width: jpg.width, height: jpg.height, rgba: jpg.data };
    } else {
      throw new DatasetError('NB_DATASET_BAD_IMAGE', `${file} is neither PNG nor JPEG (its first bytes are ${[...bytes.subarray(0, 4)].map((b) => b.toString(16).padStart(2, '0')).join(' ')}); convert or remove it`, { file });
    }
  } catch (err) {
    if (err instanceof DatasetError) throw err;
    throw new DatasetError('NB_DATASET_BAD_IMAGE', `${file} cannot be decoded (${(err as Error).message}); the file may be truncated or damaged: replace or remove it`, { file });
  }
  if (image.width < 1 || image.height < 1 || image.width > MAX_IMAGE_SIDE || image.height > MAX_IMAGE_SIDE || image.rgba.length < image.width * image.height * 4) {
    throw new DatasetError('NB_DATASET_BAD_IMAGE', `${file} decodes to ${image.width}×${image.height} pixels, outside 1 to ${MAX_IMAGE_SIDE} per side; replace or remove it`, { file });
  }
  return image;
}
