import { InternalError, type LabelledSamples, type PreparedDataset, type TargetScaling } from '@netbreeder/shared-types';
import { DatasetError } from './dataset-error.js';
import type { ColumnEncoding, TablePreprocessing } from './preprocessing.js';
import type { RawColumn, RawTable } from './raw-table.js';
import { checkShardSize } from './shard-size.js';
import { stratifiedSplitIndices, type SplitFractions, type SplitIndices } from './split.js';

/** What {@link encodeTable} needs besides the table. */
export interface TableEncodingOptions {
  fractions: SplitFractions;
  /** Seeds the split. */
  seed: number | string;
  /** Standardise numeric columns with the training mean and standard deviation. */
  standardize: boolean;
  /** Largest training shard allowed, MiB (checked before encoding). */
  maxDatasetMb: number;
  /** Recorded in the preprocessing. */
  missing: TablePreprocessing['missing'];
  missingValues: string[];
}

export interface EncodedTable {
  dataset: PreparedDataset;
  preprocessing: TablePreprocessing;
  split: SplitIndices;
  /** Feature columns with a single value (or none) in the training split. */
  constantColumns: string[];
}

const collator = new Intl.Collator('en', { numeric: true });

/**
 * Splits a table's rows three ways (stratified by class, or by target quantile bin for a
 * regression table, seeded) and only then fits the encoding
 * on the training rows: numeric columns' mean and standard deviation, categorical columns' list of
 * categories. The same encoding is applied to all three splits, so nothing from validation or test
 * leaks into it; a category seen only outside training encodes as all zeros, like a missing one.
 * A regression target is standardised with its training mean and standard deviation. Pure.
 */
export function encodeTable(table: RawTable, options: TableEncodingOptions): EncodedTable {
  const split = stratifiedSplitIndices(table.labels, table.classNames, options.fractions, options.seed);
  const constantColumns: string[] = [];
  let offset = 0;
  const encodings: ColumnEncoding[] = table.columns.map((col) => {
    const enc = fitColumn(col, split.train, offset, options.standardize);
    if (enc.constant) constantColumns.push(col.name);
    offset += enc.encoding.kind === 'numeric' ? 1 : enc.encoding.categories.length;
    return enc.encoding;
  });
  const featureCount = offset;
  checkShardSize(split.train.length + split.val.length, Math.max(1, featureCount), options.maxDatasetMb, table.file);
  const target = table.targets ? fitTargetScaling(table.targets, split.train, table.labelColumn) : undefined;
  const encode = (indices: Int32Array): LabelledSamples => {
    const samples = encodeRows(table, encodings, featureCount, options.standardize, indices);
    return target ? { ...samples, targets: standardizeTargets(table.targets!, indices, target) } : samples;
  };
  const preprocessing: TablePreprocessing = {
    kind: 'table',
    file: table.file,
    labelColumn: table.labelColumn,
    columns: encodings,
    featureCount,
    missing: options.missing,
    missingValues: options.missingValues,
    droppedRows: table.droppedRows,
    standardized: options.standardize,
    ignoredColumns: table.ignoredColumns,
    ...(target ? { target } : {}),
  };
  return {
    dataset: {
      inputShape: [featureCount],
      classNames: [...table.classNames],
      train: encode(split.train),
      val: encode(split.val),
      test: encode(split.test),
      ...(target ? { target } : {}),
    },
    preprocessing,
    split,
    constantColumns,
  };
}

/** The training rows' mean and (population) standard deviation of a regression target; a constant training target is refused. */
export function fitTargetScaling(targets: Float64Array, train: Int32Array, column: string): TargetScaling {
  let sum = 0;
  for (const i of train) sum += targets[i]!;
  const mean = sum / train.length;
  let squares = 0;
  for (const i of train) squares += (targets[i]! - mean) ** 2;
  const std = Math.sqrt(squares / train.length);
  if (!(std > 0)) {
    throw new DatasetError('NB_DATASET_CONSTANT_TARGET', `the target column "${column}" has the single value ${mean} in every training row; there is nothing to learn: use a column whose values vary`, { field: column });
  }
  return { column, mean, std };
}

/** `(value - mean) / std` of the rows at `indices`. */
export function standardizeTargets(targets: Float64Array, indices: Int32Array, scaling: TargetScaling): Float32Array {
  return Float32Array.from(indices, (i) => (targets[i]! - scaling.mean) / scaling.std);
}

/** A standardised target back in the target's own units. */
export const unstandardizeTarget = (value: number, scaling: TargetScaling): number => value * scaling.std + scaling.mean;

function fitColumn(col: RawColumn, train: Int32Array, offset: number, standardize: boolean): { encoding: ColumnEncoding; constant: boolean } {
  if (col.kind === 'numeric') {
    let n = 0;
    let sum = 0;
    let min = Infinity;
    let max = -Infinity;
    for (const i of train) {
      const v = col.values[i]!;
      if (Number.isNaN(v)) continue;
      n++;
      sum += v;
      if (v < min) min = v;
      if (v > max) max = v;
    }
    const mean = n > 0 ? sum / n : 0;
    let squares = 0;
    for (const i of train) {
      const v = col.values[i]!;
      if (!Number.isNaN(v)) squares += (v - mean) ** 2;
    }
    const sd = n > 0 ? Math.sqrt(squares / n) : 0;
    const constant = !(max > min);
    return { encoding: { name: col.name, kind: 'numeric', offset, mean, std: standardize && sd > 0 ? sd : 1 }, constant };
  }
  const seen = new Uint8Array(col.values.length);
  for (const i of train) {
    const code = col.codes[i]!;
    if (code >= 0) seen[code] = 1;
  }
  const categories = col.values.filter((_, code) => seen[code] === 1).sort(collator.compare);
  return { encoding: { name: col.name, kind: 'categorical', offset, categories }, constant: categories.length <= 1 };
}

function encodeRows(table: RawTable, encodings: ColumnEncoding[], width: number, standardize: boolean, indices: Int32Array): LabelledSamples {
  const labels = new Int32Array(indices.length);
  for (let k = 0; k < indices.length; k++) labels[k] = table.labels[indices[k]!]!;
  return { features: encodeColumns(table.columns, encodings, width, standardize, indices), labels, count: indices.length };
}

/**
 * The table transform, the one both the importer and the predictor use: rows `indices` of typed
 * columns (in `encodings` order) to `width` model values per row. A numeric value becomes
 * `(value - mean) / std` when `standardize` (a missing one, NaN, the training mean first); a
 * category sets its one-hot slot, an unseen or missing one (code -1) leaves the block at zero. Pure.
 */
export function encodeColumns(columns: readonly RawColumn[], encodings: readonly ColumnEncoding[], width: number, standardize: boolean, indices: Int32Array): Float32Array {
  const features = new Float32Array(indices.length * width);
  columns.forEach((col, c) => {
    const enc = encodings[c]!;
    if (col.kind === 'numeric' && enc.kind === 'numeric') {
      // A missing value takes the training mean (0 once standardised).
      const { mean, std } = enc;
      for (let k = 0; k < indices.length; k++) {
        const v = col.values[indices[k]!]!;
        const filled = Number.isNaN(v) ? mean : v;
        features[k * width + enc.offset] = standardize ? (filled - mean) / std : filled;
      }
    } else if (col.kind === 'categorical' && enc.kind === 'categorical') {
      const slot = new Int32Array(col.values.length).fill(-1);
      const position = new Map(enc.categories.map((name, p) => [name, p]));
      col.values.forEach((name, code) => (slot[code] = position.get(name) ?? -1));
      for (let k = 0; k < indices.length; k++) {
        const code = col.codes[indices[k]!]!;
        const p = code >= 0 ? slot[code]! : -1;
        if (p >= 0) features[k * width + enc.offset + p] = 1;
      }
    } else {
      throw new InternalError(`column "${col.name}" is ${col.kind} but its encoding is ${enc.kind}`);
    }
  });
  return features;
}
