import { readFile } from 'node:fs/promises';
import { gunzipSync } from 'node:zlib';
import { DatasetError } from '../datasets/dataset-error.js';
import { parseIdx, type IdxArray } from './idx-format.js';

/** An IDX sample file and its label file, checked against each other; samples not yet converted. */
export interface IdxPair {
  samples: IdxArray;
  /** Sample shape without the count: [h, w, 1] for 2-D samples, [n] for 1-D, [h, w, c] for 3-D. */
  inputShape: number[];
  /** Class index of each sample. */
  labels: Int32Array;
  classNames: string[];
  /** Label value of each class. */
  labelValues: number[];
}

const INTEGER_TYPES = new Set([0x08, 0x09, 0x0b, 0x0c]);

/**
 * Pairs parsed sample and label arrays: the label file must be one-dimensional integers, both
 * must hold the same count. Class names come from `classNames` (label v is `classNames[v]`) or
 * are the distinct label values, ascending. Pure.
 */
export function pairIdx(samples: IdxArray, labels: IdxArray, files: { images: string; labels: string }, classNames?: readonly string[]): IdxPair {
  if (labels.dims.length !== 1 || !INTEGER_TYPES.has(labels.typeCode)) {
    throw new DatasetError(
      'NB_DATASET_BAD_IDX',
      `${files.labels} holds ${labels.dims.length}-dimensional data of type 0x${labels.typeCode.toString(16).padStart(2, '0')}; a label file is one integer per sample (magic 0x00000801)`,
      { file: files.labels },
    );
  }
  if (samples.dims.length < 2 || samples.dims.length > 4) {
    throw new DatasetError('NB_DATASET_BAD_IDX', `${files.images} has ${samples.dims.length} dimensions; a sample file has a count and 1 to 3 sample dimensions (MNIST images: count × 28 × 28)`, { file: files.images });
  }
  const count = samples.dims[0]!;
  if (labels.dims[0] !== count) {
    throw new DatasetError(
      'NB_DATASET_COUNT_MISMATCH',
      `${files.images} holds ${count} samples but ${files.labels} holds ${labels.dims[0]} labels; pair each sample file with its own label file`,
      { file: files.labels },
    );
  }
  const rest = samples.dims.slice(1);
  const inputShape = rest.length === 2 ? [rest[0]!, rest[1]!, 1] : rest;
  const values = labels.values;
  let labelValues: number[];
  let names: string[];
  if (classNames) {
    labelValues = classNames.map((_, v) => v);
    names = [...classNames];
  } else {
    labelValues = [...new Set(values)].sort((a, b) => a - b);
    names = labelValues.map(String);
  }
  const classOf = new Map(labelValues.map((v, i) => [v, i]));
  const out = new Int32Array(count);
  for (let i = 0; i < count; i++) {
    const c = classOf.get(values[i]!);
    if (c === undefined) {
      throw new DatasetError(
        'NB_DATASET_BAD_LABEL',
        `${files.labels}: label ${i} is ${values[i]}, but classNames lists only ${names.length} classes (label values 0 to ${names.length - 1})`,
        { file: files.labels, field: 'classNames' },
      );
    }
    out[i] = c;
  }
  return { samples, inputShape, labels: out, classNames: names, labelValues };
}

/** The samples as float32, divided by 255 when `scaleBytes` and the type is unsigned byte. */
export function idxFeatures(samples: IdxArray, scaleBytes: boolean): Float32Array {
  const out = new Float32Array(samples.values.length);
  const scale = scaleBytes && samples.typeCode === 0x08 ? 1 / 255 : 1;
  const values = samples.values;
  for (let i = 0; i < out.length; i++) out[i] = values[i]! * scale;
  return out;
}

/** Reads one IDX file, unpacking it first when it is gzip (by its first bytes). */
export async function readIdxFile(file: string): Promise<IdxArray> {
  let bytes: Uint8Array;
  try {
    bytes = await readFile(file);
  } catch (err) {
    throw new DatasetError('NB_DATASET_UNREADABLE', `cannot read IDX file ${file}: ${(err as Error).message}; check the path (relative to the run file's folder)`, { file });
  }
  if (bytes.length === 0) throw new DatasetError('NB_DATASET_EMPTY', `${file} is empty (0 bytes)`, { file });
  if (bytes[0] === 0x1f && bytes[1] === 0x8b) {
    try {
      bytes = gunzipSync(bytes);
    } catch (err) {
      throw new DatasetError('NB_DATASET_BAD_IDX', `${file} looks gzip-compressed but does not unpack: ${(err as Error).message}; the download may be truncated`, { file });
    }
  }
  return parseIdx(bytes, file);
}
