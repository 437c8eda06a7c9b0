import { readdir, readFile } from 'node:fs/promises';
import { join } from 'node:path';
import { DatasetError } from '../datasets/dataset-error.js';
import { decodeImage } from './image-decode.js';
import { writeModelPixels, type PixelTarget } from './image-pixels.js';

/** The images of a folder with one sub-folder per class, listed but not yet decoded. */
export interface ImageFolderListing {
  folder: string;
  /** Sub-folder names, sorted: class i is `classNames[i]`. */
  classNames: string[];
  /** Image files, class by class, each sorted by name. */
  files: string[];
  labels: Int32Array;
  /** Files skipped for their name: hidden, or not `.png`, `.jpg`, `.jpeg`. */
  skipped: number;
}

const IMAGE_NAME = /\.(png|jpe?g)$/i;
const collator = new Intl.Collator('en', { numeric: true });

/** Lists `folder`'s class sub-folders and their image files, in a fixed order. */
export async function listImageFolder(folder: string): Promise<ImageFolderListing> {
  const entries = await readdir(folder, { withFileTypes: true }).catch((err: Error) => {
    throw new DatasetError('NB_DATASET_UNREADABLE', `cannot read the image folder ${folder}: ${err.message}; check dataset.path (relative to the run file's folder)`, { file: folder });
  });
  const classNames = entries.filter((e) => e.isDirectory() && !e.name.startsWith('.')).map((e) => e.name).sort(collator.compare);
  if (classNames.length === 0) {
    throw new DatasetError('NB_DATASET_EMPTY', `${folder} has no class sub-folders; put each class's images in a sub-folder named after the class`, { file: folder });
  }
  const files: string[] = [];
  const labels: number[] = [];
  let skipped = entries.filter((e) => e.isFile()).length;
  for (const [c, name] of classNames.entries()) {
    const dir = join(folder, name);
    const inside = await readdir(dir, { withFileTypes: true }).catch((err: Error) => {
      throw new DatasetError('NB_DATASET_UNREADABLE', `cannot read the class folder ${dir}: ${err.message}`, { file: dir });
    });
    const images = inside.filter((e) => e.isFile() && !e.name.startsWith('.') && IMAGE_NAME.test(e.name)).map((e) => e.name).sort(collator.compare);
    skipped += inside.length - images.length;
    if (images.length === 0) {
      throw new DatasetError('NB_DATASET_EMPTY', `class folder ${dir} holds no PNG or JPEG images; add images or remove the folder`, { file: dir });
    }
    for (const image of images) {
      files.push(join(dir, image));
      labels.push(c);
    }
  }
  return { folder, classNames, files, labels: Int32Array.from(labels), skipped };
}

/** Size of the first image of a listing (decoded once), for runs that set no `imageSize`. */
export async function firstImageSize(listing: ImageFolderListing): Promise<{ width: number; height: number }> {
  const file = listing.files[0]!;
  const image = decodeImage(await readImageFile(file), file);
  return { width: image.width, height: image.height };
}

/**
 * Decodes every image of the listing into one feature array (`target.height × width × channels`
 * values per image, in listing order). With `requireSize` every image must already be that size
 * (no `imageSize` in the run file); another size is refused, naming the file. Reads a few files
 * at a time.
 */
export async function decodeImageFolder(listing: ImageFolderListing, target: PixelTarget, requireSize: boolean, concurrency = 8): Promise<Float32Array> {
  const size = target.width * target.height * target.channels;
  const features = new Float32Array(listing.files.length * size);
  let next = 0;
  const work = async (): Promise<void> => {
    for (let i = next++; i < listing.files.length; i = next++) {
      const file = listing.files[i]!;
      const image = decodeImage(await readImageFile(file), file);
      if (requireSize && (image.width !== target.width || image.height !== target.height)) {
        throw new DatasetError(
          'NB_DATASET_MIXED_IMAGE_SIZES',
          `${file} is ${image.width}×${image.height} pixels, but ${listing.files[0]} is ${target.width}×${target.height}; ` +
            'set dataset.imageSize in the run file (e.g. {"width": 32, "height": 32}) so every image is resized',
          { file },
        );
      }
      writeModelPixels(image.rgba, image.width, image.height, target, features, i * size);
    }
  };
  await Promise.all(Array.from({ length: Math.max(1, concurrency) }, work));
  return features;
}

async function readImageFile(file: string): Promise<Uint8Array> {
  try {
    return await readFile(file);
  } catch (err) {
    throw new DatasetError('NB_DATASET_UNREADABLE', `cannot read image ${file}: ${(err as Error).message}`, { file });
  }
}
