import type { LabelledSamples, PreparedDataset, SeriesWindowsSource } from '@netbreeder/shared-types';
import { DatasetError } from './dataset-error.js';
import type { SeriesPreprocessing } from './preprocessing.js';
import { quantileBins } from './regression-target.js';
import type { SplitFractions } from './split.js';
import { fitTargetScaling } from './table-encoding.js';

/** One long series as read from a CSV of time steps: one value per channel and step, in time order. */
export interface RawSeries {
  file: string;
  /** Channel column names, in the order of the sample's channel axis. */
  channels: string[];
  /** `values[c][t]`: channel c at step t. */
  values: Float64Array[];
  /** The file line of each step. */
  lines: Int32Array;
  /** The target column: its text per step (classification) or its number (regression); absent for new data. */
  target?: { column: string; labels: string[] } | { column: string; numbers: Float64Array };
}

export type WindowSettings = Pick<SeriesWindowsSource, 'window' | 'stride' | 'task' | 'horizon'>;

/** Steps of the training, validation and test parts of a series: [0, valStart), [valStart, testStart), [testStart, steps). */
export interface TimeParts {
  valStart: number;
  testStart: number;
  steps: number;
}

/** The series cut in three parts by time: the last `test` share for test, the `validation` share before it, the rest trains. */
export function timeParts(steps: number, fractions: SplitFractions): TimeParts {
  const test = Math.round(steps * fractions.test);
  const val = Math.round(steps * fractions.validation);
  return { valStart: steps - test - val, testStart: steps - test, steps };
}

/** Steps after a window's last step where its target is read: `horizon` for regression, 0 for a class. */
const targetOffset = (s: WindowSettings): number => (s.task === 'regression' ? s.horizon : 0);

/**
 * Window starts (every `stride` steps from step 0) of each part: a window belongs to the part
 * holding all its steps and its target step; windows that straddle a boundary are left out.
 */
export function windowStarts(parts: TimeParts, s: WindowSettings): { train: number[]; val: number[]; test: number[] } {
  const out = { train: [] as number[], val: [] as number[], test: [] as number[] };
  const reach = s.window - 1 + targetOffset(s);
  for (let start = 0; start + reach < parts.steps; start += s.stride) {
    const end = start + reach;
    if (end < parts.valStart) out.train.push(start);
    else if (start >= parts.valStart && end < parts.testStart) out.val.push(start);
    else if (start >= parts.testStart) out.test.push(start);
  }
  return out;
}

/**
 * Refuses settings the series cannot carry, naming the fix: a window longer than the series, a
 * horizon that leaves no target, or a part without a single whole window.
 */
export function checkWindowing(series: RawSeries, parts: TimeParts, s: WindowSettings, starts: ReturnType<typeof windowStarts>): void {
  const { file } = series;
  const n = parts.steps;
  if (s.window > n) {
    throw new DatasetError('NB_DATASET_BAD_OPTIONS', `${file}: window is ${s.window} steps but the series has only ${n}; choose a window of at most ${n} steps or give a longer series`, { file, field: 'dataset.window' });
  }
  if (s.window + targetOffset(s) > n) {
    throw new DatasetError(
      'NB_DATASET_BAD_OPTIONS',
      `${file}: a window of ${s.window} steps with horizon ${s.horizon} needs ${s.window + s.horizon} steps, the series has ${n}, so no window has a target; lower horizon or window`,
      { file, field: 'dataset.horizon' },
    );
  }
  for (const part of ['train', 'val', 'test'] as const) {
    if (starts[part].length > 0) continue;
    const name = { train: 'training', val: 'validation', test: 'test' }[part];
    const length = part === 'train' ? parts.valStart : part === 'val' ? parts.testStart - parts.valStart : n - parts.testStart;
    throw new DatasetError(
      'NB_DATASET_BAD_OPTIONS',
      `${file}: the ${name} part of the series (${length} of ${n} steps, split by time) holds no whole window of ${s.window} steps` +
        `${targetOffset(s) ? ` plus its target ${s.horizon} steps ahead` : ''}; give a longer series, a shorter window, or a larger split share`,
      { file, field: 'dataset.window' },
    );
  }
}

/** Mean and population standard deviation of each channel over steps [0, end) (std 1 for a constant channel). */
export function fitChannels(series: RawSeries, end: number): Array<{ name: string; mean: number; std: number }> {
  return series.channels.map((name, c) => {
    const v = series.values[c]!;
    let sum = 0;
    for (let t = 0; t < end; t++) sum += v[t]!;
    const mean = sum / end;
    let squares = 0;
    for (let t = 0; t < end; t++) squares += (v[t]! - mean) ** 2;
    const std = Math.sqrt(squares / end);
    return { name, mean, std: std > 0 ? std : 1 };
  });
}

/** The standardised windows starting at `starts`, each [window, channels] laid out step by step. */
export function windowFeatures(series: RawSeries, channels: ReadonlyArray<{ mean: number; std: number }>, window: number, starts: readonly number[]): Float32Array {
  const width = channels.length;
  const out = new Float32Array(starts.length * window * width);
  starts.forEach((start, i) => {
    for (let t = 0; t < window; t++) {
      for (let c = 0; c < width; c++) out[(i * window + t) * width + c] = (series.values[c]![start + t]! - channels[c]!.mean) / channels[c]!.std;
    }
  });
  return out;
}

/**
 * Cuts a series into windows, splits them by time (see {@link timeParts}, {@link windowStarts}),
 * standardises the channels on the training part and reads each window's target: the class at
 * its last step, or the number `horizon` steps later standardised on the training windows. Pure.
 */
export function windowSeries(series: RawSeries, s: WindowSettings, fractions: SplitFractions): { dataset: PreparedDataset; preprocessing: SeriesPreprocessing } {
  const parts = timeParts(series.lines.length, fractions);
  const starts = windowStarts(parts, s);
  checkWindowing(series, parts, s, starts);
  const target = series.target;
  if (!target) throw new DatasetError('NB_DATASET_NO_LABEL_COLUMN', `${series.file}: a series for training needs its target column`, { file: series.file });
  const channels = fitChannels(series, parts.valStart);
  const all = [...starts.train, ...starts.val, ...starts.test];
  const targetStep = (start: number): number => start + s.window - 1 + targetOffset(s);
  const inputShape = [s.window, channels.length];
  const preprocessing: SeriesPreprocessing = {
    kind: 'series-windows',
    file: series.file,
    channels,
    window: s.window,
    stride: s.stride,
    labelColumn: target.column,
    ...(s.task === 'regression' ? { horizon: s.horizon } : {}),
    steps: { train: parts.valStart, val: parts.testStart - parts.valStart, test: parts.steps - parts.testStart },
  };
  if ('numbers' in target) {
    const numbers = Float64Array.from(all, (start) => target.numbers[targetStep(start)]!);
    const trainIdx = Int32Array.from(starts.train, (_, i) => i);
    const scaling = fitTargetScaling(numbers, trainIdx, target.column);
    const bins = quantileBins(numbers, series.file, target.column);
    let at = 0;
    const part = (list: number[]): LabelledSamples => {
      const from = at;
      at += list.length;
      return {
        features: windowFeatures(series, channels, s.window, list),
        labels: bins.labels.slice(from, at),
        count: list.length,
        targets: Float32Array.from(numbers.subarray(from, at), (v) => (v - scaling.mean) / scaling.std),
      };
    };
    const dataset: PreparedDataset = { inputShape, classNames: bins.names, train: part(starts.train), val: part(starts.val), test: part(starts.test), target: scaling };
    return { dataset, preprocessing };
  }
  const classNames = [...new Set(all.map((start) => target.labels[targetStep(start)]!))].sort(new Intl.Collator('en', { numeric: true }).compare);
  const classIndex = new Map(classNames.map((name, i) => [name, i]));
  const part = (list: number[]): LabelledSamples => ({
    features: windowFeatures(series, channels, s.window, list),
    labels: Int32Array.from(list, (start) => classIndex.get(target.labels[targetStep(start)]!)!),
    count: list.length,
  });
  return { dataset: { inputShape, classNames, train: part(starts.train), val: part(starts.val), test: part(starts.test) }, preprocessing };
}
