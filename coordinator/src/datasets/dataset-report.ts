import { sampleSize, type LabelledSamples, type PreparedDataset } from '@netbreeder/shared-types';
import { classCounts } from './split.js';

/** Samples of each class in each split, in class order. */
export interface SplitClassCounts {
  train: number[];
  val: number[];
  test: number[];
}

/** Something about a dataset worth a look before trusting a run on it; the run goes ahead. */
export interface DatasetWarning {
  code: 'tiny-class' | 'class-imbalance' | 'duplicates-across-splits' | 'constant-columns' | 'sequences-cut';
  message: string;
}

/** A class with fewer training samples than this is called tiny (common practice, not a published figure). */
export const TINY_CLASS_TRAIN_SAMPLES = 10;
/** Largest over smallest class size at or above which the classes count as imbalanced (common practice). */
export const IMBALANCE_RATIO = 5;

export function splitClassCounts(dataset: PreparedDataset): SplitClassCounts {
  const k = dataset.classNames.length;
  return { train: classCounts(dataset.train, k), val: classCounts(dataset.val, k), test: classCounts(dataset.test, k) };
}

/**
 * The warnings of a prepared dataset: tiny classes (fewer than {@link TINY_CLASS_TRAIN_SAMPLES} in
 * training), class imbalance (largest / smallest ≥ {@link IMBALANCE_RATIO}), samples whose
 * features appear in two splits (validation or test then partly measure memory, not
 * generalisation), and `constantColumns` the caller found (table columns with one value in
 * training, which carry no information). Pure.
 */
export function datasetWarnings(dataset: PreparedDataset, counts: SplitClassCounts, constantColumns: readonly string[] = []): DatasetWarning[] {
  const warnings: DatasetWarning[] = [];
  const names = dataset.classNames;
  const tiny = names.filter((_, c) => counts.train[c]! < TINY_CLASS_TRAIN_SAMPLES);
  if (tiny.length > 0) {
    warnings.push({
      code: 'tiny-class',
      message: `${tiny.map((n) => `class "${n}" has ${counts.train[names.indexOf(n)]} training samples`).join(', ')}; fewer than ${TINY_CLASS_TRAIN_SAMPLES} per class make its scores noisy: add samples or merge classes`,
    });
  }
  const totals = names.map((_, c) => counts.train[c]! + counts.val[c]! + counts.test[c]!);
  const largest = Math.max(...totals);
  const smallest = Math.min(...totals);
  if (smallest > 0 && largest / smallest >= IMBALANCE_RATIO) {
    warnings.push({
      code: 'class-imbalance',
      message: `classes are imbalanced: "${names[totals.indexOf(largest)]}" has ${largest} samples, "${names[totals.indexOf(smallest)]}" ${smallest} (${(largest / smallest).toFixed(1)}×); accuracy will favour the large classes`,
    });
  }
  const size = sampleSize(dataset.inputShape);
  const dup = duplicatesAcrossSplits(dataset, size);
  if (dup.valInTrain + dup.testInTrain + dup.testInVal > 0) {
    warnings.push({
      code: 'duplicates-across-splits',
      message:
        `${dup.valInTrain} validation and ${dup.testInTrain} test samples have the same features as a training sample, and ${dup.testInVal} test samples as a validation sample; ` +
        'those scores partly measure memory: remove duplicate rows or images from the data',
    });
  }
  if (constantColumns.length > 0) {
    warnings.push({
      code: 'constant-columns',
      message: `column${constantColumns.length === 1 ? '' : 's'} ${constantColumns.map((c) => `"${c}"`).join(', ')} hold${constantColumns.length === 1 ? 's' : ''} a single value in the training split and carry no information; drop ${constantColumns.length === 1 ? 'it' : 'them'} with ignoreColumns`,
    });
  }
  return warnings;
}

/** How many samples of one split have exactly the features of some sample in another. */
export function duplicatesAcrossSplits(dataset: PreparedDataset, size: number): { valInTrain: number; testInTrain: number; testInVal: number } {
  const trainIndex = indexSamples(dataset.train, size);
  const valIndex = indexSamples(dataset.val, size);
  return {
    valInTrain: countFound(dataset.val, size, dataset.train, trainIndex),
    testInTrain: countFound(dataset.test, size, dataset.train, trainIndex),
    testInVal: countFound(dataset.test, size, dataset.val, valIndex),
  };
}

/** FNV-1a over the float bits of one sample. */
function hashSample(bits: Uint32Array, start: number, size: number): number {
  let h = 0x811c9dc5;
  for (let j = start; j < start + size; j++) {
    h = Math.imul(h ^ bits[j]!, 0x01000193) >>> 0;
  }
  return h;
}

function indexSamples(split: LabelledSamples, size: number): Map<number, number[]> {
  const bits = new Uint32Array(split.features.buffer, split.features.byteOffset, split.features.length);
  const index = new Map<number, number[]>();
  for (let i = 0; i < split.count; i++) {
    const h = hashSample(bits, i * size, size);
    const bucket = index.get(h);
    if (bucket) bucket.push(i);
    else index.set(h, [i]);
  }
  return index;
}

function countFound(split: LabelledSamples, size: number, other: LabelledSamples, index: Map<number, number[]>): number {
  const bits = new Uint32Array(split.features.buffer, split.features.byteOffset, split.features.length);
  const otherBits = new Uint32Array(other.features.buffer, other.features.byteOffset, other.features.length);
  let found = 0;
  for (let i = 0; i < split.count; i++) {
    const bucket = index.get(hashSample(bits, i * size, size));
    if (!bucket) continue;
    if (bucket.some((o) => sameBits(bits, i * size, otherBits, o * size, size))) found++;
  }
  return found;
}

function sameBits(a: Uint32Array, ia: number, b: Uint32Array, ib: number, size: number): boolean {
  for (let j = 0; j < size; j++) if (a[ia + j] !== b[ib + j]) return false;
  return true;
}
