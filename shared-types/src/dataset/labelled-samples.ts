/** Samples of one split: features row-major (count × product(inputShape)) and one class index each. */
export interface LabelledSamples {
  features: Float32Array;
  labels: Int32Array;
  count: number;
  /** Regression only: the standardised target of each sample (then `labels` are only its quantile bin). */
  targets?: Float32Array;
}

/** A dataset ready to train on, split three ways. The test split never leaves the coordinator. */
export interface PreparedDataset {
  inputShape: number[];
  classNames: string[];
  train: LabelledSamples;
  val: LabelledSamples;
  test: LabelledSamples;
  /** Regression only: the target column and its training-split scaling. */
  target?: { column: string; mean: number; std: number; loss?: 'huber' };
}

export const sampleSize = (inputShape: readonly number[]): number => inputShape.reduce((a, b) => a * b, 1);

/** Joins two splits (train + validation for a champion's final training). */
export function concatSamples(a: LabelledSamples, b: LabelledSamples): LabelledSamples {
  const features = new Float32Array(a.features.length + b.features.length);
  features.set(a.features, 0);
  features.set(b.features, a.features.length);
  const labels = new Int32Array(a.count + b.count);
  labels.set(a.labels, 0);
  labels.set(b.labels, a.count);
  if (!a.targets || !b.targets) return { features, labels, count: a.count + b.count };
  const targets = new Float32Array(a.count + b.count);
  targets.set(a.targets, 0);
  targets.set(b.targets, a.count);
  return { features, labels, count: a.count + b.count, targets };
}

/** Samples `start` (inclusive) to `end` (exclusive) of a split, in order (views, not copies). */
export function sliceSamples(s: LabelledSamples, start: number, end: number): LabelledSamples {
  const from = Math.max(0, Math.min(start, s.count));
  const to = Math.max(from, Math.min(end, s.count));
  const width = s.count ? s.features.length / s.count : 0;
  return {
    features: s.features.subarray(from * width, to * width),
    labels: s.labels.subarray(from, to),
    count: to - from,
    ...(s.targets ? { targets: s.targets.subarray(from, to) } : {}),
  };
}
