import { createRandom, sampleSize, type LabelledSamples, type PreparedDataset } from '@netbreeder/shared-types';
import { DatasetError } from './dataset-error.js';

/** Shares of each class held out from training. The rest of each class trains. */
export interface SplitFractions {
  /** Share of each class in the validation split, which scores every evaluation. In (0, 1). */
  validation: number;
  /** Share of each class in the test split, which only the champion's final score sees. In (0, 1). */
  test: number;
}

/** Which samples (indices into the samples given) went to each split, in the order they appear there. */
export interface SplitIndices {
  train: Int32Array;
  val: Int32Array;
  test: Int32Array;
}

/** A class needs one sample in each of the three splits. */
export const MIN_SAMPLES_PER_CLASS = 3;

/**
 * Splits samples three ways, stratified by class: each class is shuffled with the seed and cut by
 * `fractions` (rounded per class), and every class gets at least one sample in each split. Each
 * split comes out in a shuffled order, not grouped by class. Features are copied, so the result
 * shares no memory with `samples`. Throws a {@link DatasetError} when the samples do not fit their
 * shape, a label is no class, a class has fewer than {@link MIN_SAMPLES_PER_CLASS} samples, or the
 * fractions leave nothing to train on.
 */
export function stratifiedSplit(
  samples: LabelledSamples,
  inputShape: readonly number[],
  classNames: readonly string[],
  fractions: SplitFractions,
  seed: number | string,
): PreparedDataset {
  const size = checkShape(samples, inputShape);
  const indices = stratifiedSplitIndices(samples.labels, classNames, fractions, seed);
  return {
    inputShape: [...inputShape],
    classNames: [...classNames],
    train: selectSamples(samples, indices.train, size),
    val: selectSamples(samples, indices.val, size),
    test: selectSamples(samples, indices.test, size),
  };
}

/**
 * The split itself, as indices into `labels`: what {@link stratifiedSplit} uses, and what a caller
 * records to show later which sample went where. Same rules and errors as {@link stratifiedSplit}.
 */
export function stratifiedSplitIndices(
  labels: Int32Array,
  classNames: readonly string[],
  fractions: SplitFractions,
  seed: number | string,
): SplitIndices {
  checkFractions(fractions);
  const numClasses = classNames.length;
  if (numClasses < 2) {
    throw new DatasetError(
      'NB_DATASET_TOO_FEW_CLASSES',
      `split: the dataset has ${numClasses} class${numClasses === 1 ? '' : 'es'}; a classifier needs at least 2: ` +
        'check that the label column or folder names hold more than one class',
    );
  }
  const byClass = indicesByClass(labels, numClasses);
  const small = byClass.map((members, c) => ({ name: classNames[c]!, count: members.length })).filter((c) => c.count < MIN_SAMPLES_PER_CLASS);
  if (small.length > 0) {
    throw new DatasetError(
      'NB_DATASET_CLASS_TOO_SMALL',
      `split: ${small.map((c) => `class "${c.name}" has ${c.count} sample${c.count === 1 ? '' : 's'}`).join(', ')}; ` +
        `each class needs at least ${MIN_SAMPLES_PER_CLASS} (one each for training, validation and test): ` +
        'add samples of these classes, or drop or merge them',
    );
  }
  const rng = createRandom(`split:${String(seed)}`);
  const train: number[] = [];
  const val: number[] = [];
  const test: number[] = [];
  for (const members of byClass) {
    const shuffled = rng.shuffled(members);
    const [, nVal, nTest] = classSplitSizes(shuffled.length, fractions);
    val.push(...shuffled.slice(0, nVal));
    test.push(...shuffled.slice(nVal, nVal + nTest));
    train.push(...shuffled.slice(nVal + nTest));
  }
  return {
    train: Int32Array.from(rng.shuffled(train)),
    val: Int32Array.from(rng.shuffled(val)),
    test: Int32Array.from(rng.shuffled(test)),
  };
}

/**
 * How many of a class's `n` samples (n ≥ 3) go to [train, validation, test]: each held-out share
 * is `round(n × fraction)`, at least 1, and shrunk (the larger first) until one sample trains.
 */
export function classSplitSizes(n: number, fractions: SplitFractions): [number, number, number] {
  if (!Number.isInteger(n) || n < MIN_SAMPLES_PER_CLASS) {
    throw new DatasetError(
      'NB_DATASET_CLASS_TOO_SMALL',
      `split: a class of ${String(n)} samples cannot be split three ways; it needs at least ${MIN_SAMPLES_PER_CLASS}`,
    );
  }
  let nVal = Math.max(1, Math.round(n * fractions.validation));
  let nTest = Math.max(1, Math.round(n * fractions.test));
  while (nVal + nTest > n - 1) {
    if (nVal >= nTest) nVal--;
    else nTest--;
  }
  return [n - nVal - nTest, nVal, nTest];
}

/** Samples of each class in one split: `counts[c]` is the number of samples labelled `c`. */
export function classCounts(split: Pick<LabelledSamples, 'labels' | 'count'>, numClasses: number): number[] {
  const counts = new Array<number>(numClasses).fill(0);
  for (let i = 0; i < split.count; i++) {
    const label = split.labels[i]!;
    if (label < 0 || label >= numClasses) throw badLabel(i, label, numClasses);
    counts[label]!++;
  }
  return counts;
}

/** The samples at `indices`, copied, in that order. */
export function selectSamples(samples: LabelledSamples, indices: Int32Array, size: number): LabelledSamples {
  const features = new Float32Array(indices.length * size);
  const labels = new Int32Array(indices.length);
  for (let k = 0; k < indices.length; k++) {
    const i = indices[k]!;
    features.set(samples.features.subarray(i * size, (i + 1) * size), k * size);
    labels[k] = samples.labels[i]!;
  }
  return { features, labels, count: indices.length };
}

function checkFractions(fractions: SplitFractions): void {
  for (const [name, value] of [
    ['validation', fractions.validation],
    ['test', fractions.test],
  ] as const) {
    if (!Number.isFinite(value) || value <= 0 || value >= 1) {
      throw new DatasetError(
        'NB_DATASET_BAD_OPTIONS',
        `split: the ${name} fraction must be a number between 0 and 1 (both excluded), got ${String(value)}; ` +
          `set split.${name} in the run file to, for example, 0.15`,
      );
    }
  }
  if (fractions.validation + fractions.test >= 1) {
    throw new DatasetError(
      'NB_DATASET_NO_TRAINING_DATA',
      `split: validation ${fractions.validation} + test ${fractions.test} = ${fractions.validation + fractions.test} ` +
        'leaves no training data; make their sum smaller than 1 (0.15 each is usual)',
    );
  }
}

function checkShape(samples: LabelledSamples, inputShape: readonly number[]): number {
  if (inputShape.length === 0 || !inputShape.every((d) => Number.isInteger(d) && d > 0)) {
    throw new DatasetError(
      'NB_DATASET_SHAPE_MISMATCH',
      `split: input shape [${inputShape.join(', ')}] must be a non-empty list of positive integers, such as [16, 16, 1] or [4]`,
    );
  }
  const size = sampleSize(inputShape);
  if (!Number.isInteger(samples.count) || samples.count < 0) {
    throw new DatasetError('NB_DATASET_SHAPE_MISMATCH', `split: sample count must be a non-negative integer, got ${String(samples.count)}`);
  }
  if (samples.labels.length !== samples.count || samples.features.length !== samples.count * size) {
    throw new DatasetError(
      'NB_DATASET_SHAPE_MISMATCH',
      `split: ${samples.count} samples of shape [${inputShape.join(', ')}] need ${samples.count * size} feature values and ` +
        `${samples.count} labels, got ${samples.features.length} and ${samples.labels.length}; ` +
        'check the input shape and that every sample was read whole',
    );
  }
  return size;
}

function indicesByClass(labels: Int32Array, numClasses: number): number[][] {
  const byClass: number[][] = Array.from({ length: numClasses }, () => []);
  for (let i = 0; i < labels.length; i++) {
    const label = labels[i]!;
    if (label < 0 || label >= numClasses) throw badLabel(i, label, numClasses);
    byClass[label]!.push(i);
  }
  return byClass;
}

function badLabel(index: number, label: number, numClasses: number): DatasetError {
  return new DatasetError(
    'NB_DATASET_BAD_LABEL',
    `sample ${index} has label ${label}, but only class indices 0 to ${numClasses - 1} exist: ` +
      'map every label to the index of its class name',
  );
}
