/**
 * How raw inputs were turned into the numbers a run trained on, recorded with the stored dataset
 * so the champion's report and export can say how to feed the model new data. Everything fitted
 * (means, standard deviations, category lists) was fitted on the training split only.
 */
export type DatasetPreprocessing = DemoPreprocessing | TablePreprocessing | ImagePreprocessing | IdxPreprocessing | SeriesPreprocessing | SequencesPreprocessing;

export interface DemoPreprocessing {
  kind: 'demo-tiles';
  /** Tiles are generated as [16, 16, 1] brightness values in [0, 1]; nothing is fitted. */
  inputShape: number[];
}

/** One numeric column: its `standardized = (value - mean) / std` lands at `offset` of the feature vector. */
export interface NumericColumnEncoding {
  name: string;
  kind: 'numeric';
  offset: number;
  /** Training mean; also what a missing cell becomes (under `missing: "fill"`). */
  mean: number;
  /** Training standard deviation (population); 1 when the column is constant or not standardised. */
  std: number;
}

/** One categorical column: a one-hot block of `categories.length` values starting at `offset`. */
export interface CategoricalColumnEncoding {
  name: string;
  kind: 'categorical';
  offset: number;
  /** Categories seen in training, in block order; any other value (or a missing one) is all zeros. */
  categories: string[];
}

export type ColumnEncoding = NumericColumnEncoding | CategoricalColumnEncoding;

export interface TablePreprocessing {
  kind: 'table';
  file: string;
  labelColumn: string;
  /** Feature columns in the order their values appear in the model's input. */
  columns: ColumnEncoding[];
  /** Length of the model's input vector. */
  featureCount: number;
  /** The run file's rule for missing feature values and the tokens that count as missing. */
  missing: 'fill' | 'drop-row' | 'error';
  missingValues: string[];
  /** Rows left out before the split (under `missing: "drop-row"`). */
  droppedRows: number;
  standardized: boolean;
  ignoredColumns: string[];
  /** Regression only: the network predicts `(target - mean) / std`; multiply by `std` and add `mean` to read it. */
  target?: { column: string; mean: number; std: number };
}

export interface ImagePreprocessing {
  kind: 'images';
  folder: string;
  width: number;
  height: number;
  /** 1: luma 0.299 R + 0.587 G + 0.114 B (ITU-R BT.601); 3: R, G, B interleaved per pixel. */
  channels: 1 | 3;
  /** How images were brought to width × height; `none` when all already had that size. */
  resize: 'area' | 'bilinear' | 'none';
  /** Pixel values are byte / 255, so in [0, 1]; alpha is ignored. */
  scale: 'divide-255';
  /** Files skipped (neither PNG nor JPEG by name, or hidden). */
  skippedFiles: number;
}

export interface IdxPreprocessing {
  kind: 'idx';
  images: string;
  labels: string;
  /** IDX data type code of the samples (0x08 unsigned byte, …). */
  typeCode: number;
  inputShape: number[];
  /** `divide-255` for unsigned bytes scaled to [0, 1], else `none`. */
  scale: 'divide-255' | 'none';
  /** Label value of each class, in class order. */
  labelValues: number[];
}

/** Windows cut from one series: each channel standardised with its training part's mean and std. */
export interface SeriesPreprocessing {
  kind: 'series-windows';
  file: string;
  /** Channel columns in the order of the input's last axis, with the training part's mean and population std (1 when constant). */
  channels: Array<{ name: string; mean: number; std: number }>;
  window: number;
  stride: number;
  labelColumn: string;
  /** Regression: steps after a window's last step where its target was read. */
  horizon?: number;
  /** Time steps in each part of the split by time. */
  steps: { train: number; val: number; test: number };
}

/** Labelled sequences from a long-format CSV: channels standardised on the training samples' steps, then padded or cut to `length`. */
export interface SequencesPreprocessing {
  kind: 'sequences';
  file: string;
  idColumn: string;
  timeColumn: string;
  channels: Array<{ name: string; mean: number; std: number }>;
  length: number;
  /** Where `length` came from: the run file, or the training split's longest sample. */
  lengthFrom: 'run-file' | 'training-longest';
  /** Samples longer than `length`, cut to their first steps, and shorter ones padded. */
  cut: number;
  padded: number;
}

/** A short, human-readable line saying how to turn new raw input into a model input. */
export function describePreprocessing(p: DatasetPreprocessing): string {
  switch (p.kind) {
    case 'demo-tiles':
      return `generated demo tiles of shape [${p.inputShape.join(', ')}], brightness in [0, 1]`;
    case 'table': {
      const parts = p.columns.map((c) =>
        c.kind === 'numeric'
          ? p.standardized
            ? `${c.name}: (x - ${round(c.mean)}) / ${round(c.std)}`
            : `${c.name}: as is`
          : `${c.name}: one-hot over [${c.categories.join(', ')}]`,
      );
      const output = p.target ? `; output × ${round(p.target.std)} + ${round(p.target.mean)} = ${p.target.column}` : '';
      return `CSV row → ${p.featureCount} values in this order: ${parts.join('; ')}; missing numeric → training mean, unseen or missing category → all zeros${output}`;
    }
    case 'images':
      return `image → ${p.width}×${p.height}, ${p.channels === 1 ? 'grayscale (BT.601 luma)' : 'RGB'}, resize ${p.resize}, pixel / 255, shape [${p.height}, ${p.width}, ${p.channels}]`;
    case 'idx':
      return `IDX sample of shape [${p.inputShape.join(', ')}]${p.scale === 'divide-255' ? ', byte / 255' : ''}; class i is label value ${p.labelValues.join(', ')} in order`;
    case 'sequences':
      return (
        `CSV rows grouped by ${p.idColumn}, ordered by ${p.timeColumn} → shape [${p.length}, ${p.channels.length}]: ${p.channels.map((c) => `${c.name}: (x - ${round(c.mean)}) / ${round(c.std)}`).join('; ')}; ` +
        `longer samples keep their first ${p.length} steps, shorter ones are padded at the end with 0 (the training mean)`
      );
    case 'series-windows':
      return (
        `${p.window} consecutive CSV rows → shape [${p.window}, ${p.channels.length}]: ${p.channels.map((c) => `${c.name}: (x - ${round(c.mean)}) / ${round(c.std)}`).join('; ')}; ` +
        `target ${p.labelColumn}${p.horizon ? ` ${p.horizon} step${p.horizon === 1 ? '' : 's'} after the window's last row` : " at the window's last row"}`
      );
  }
}

const round = (x: number): string => String(Number(x.toPrecision(6)));

/** What the coordinator records about a prepared dataset besides its files. */
export interface DatasetPreparation {
  preprocessing: DatasetPreprocessing;
  /** Samples of each class per split, in class order. */
  classCounts: { train: number[]; val: number[]; test: number[] };
  /** Warnings shown when the run was created (also stored as `dataset-warning` run events). */
  warnings: Array<{ code: string; message: string }>;
}
