import { MAX_AUTO_NUMERIC_CLASSES, type CsvSource } from '@netbreeder/shared-types';
import { DatasetError } from './dataset-error.js';
import { NUMBER_CELL } from './number-cell.js';

type TargetOptions = Pick<CsvSource, 'labelColumn' | 'missing' | 'task'>;

/** Rows one target quantile bin holds at least (one per split, as for a class). */
const MIN_ROWS_PER_BIN = 3;
/** Most target quantile bins a split is stratified by. */
const MAX_BINS = 10;
/** Rows per bin aimed at, so small tables get few, well-filled bins. */
const ROWS_PER_BIN = 20;

/**
 * One cell of a regression target, checked while reading: a missing target follows `missing`
 * (`drop-row` drops the row, anything else refuses: a target is never filled) and a cell that is
 * not a number is refused, naming its line.
 */
export function checkTargetCell(cell: string, missing: boolean, line: number, file: string, options: TargetOptions): void {
  if (missing) {
    if (options.missing === 'drop-row') return;
    throw new DatasetError(
      'NB_DATASET_MISSING_VALUE',
      `${file}: line ${line}: the target column "${options.labelColumn}" is empty or missing ("${cell}"); a target is never filled: fill the cell or choose missing: "drop-row"`,
      { file, line, field: options.labelColumn },
    );
  }
  if (!NUMBER_CELL.test(cell)) {
    throw new DatasetError(
      'NB_DATASET_NOT_A_NUMBER',
      `${file}: line ${line}: the target column "${options.labelColumn}" holds "${cell.slice(0, 40)}", not a number; a regression target must be a number in every row`,
      { file, line, field: options.labelColumn },
    );
  }
}

/**
 * Refuses a label column of many distinct numbers when the run file names no task: it is far more
 * likely a number to predict than that many classes, and the class-by-class split error it would
 * otherwise meet says nothing about regression.
 */
export function checkLabelTask(distinctLabels: readonly string[], file: string, options: TargetOptions): void {
  if (options.task !== undefined || distinctLabels.length <= MAX_AUTO_NUMERIC_CLASSES) return;
  if (!distinctLabels.every((l) => NUMBER_CELL.test(l))) return;
  throw new DatasetError(
    'NB_DATASET_NUMERIC_LABEL',
    `${file}: the label column "${options.labelColumn}" holds ${distinctLabels.length} distinct numbers: to predict the number, set "task": "regression" in the run file's dataset; if they are class codes, set "task": "classification"`,
    { file, field: options.labelColumn },
  );
}

/**
 * Puts each row in one of a few equal-count bins of its target (by rank; ties go by row order), so
 * the three-way split can be stratified by them: each split then covers the target's whole range.
 * Refuses a constant target and a table too small to split. Pure.
 */
export function quantileBins(targets: Float64Array, file: string, column: string): { labels: Int32Array; names: string[] } {
  const n = targets.length;
  let min = Infinity;
  let max = -Infinity;
  for (const v of targets) {
    if (v < min) min = v;
    if (v > max) max = v;
  }
  if (!(max > min)) {
    throw new DatasetError('NB_DATASET_CONSTANT_TARGET', `${file}: the target column "${column}" has the single value ${min} in every row; there is nothing to learn: point labelColumn at a column whose values vary`, { file, field: column });
  }
  if (n < 2 * MIN_ROWS_PER_BIN) {
    throw new DatasetError('NB_DATASET_CONSTANT_TARGET', `${file}: ${n} rows are too few for a regression run; it needs at least ${2 * MIN_ROWS_PER_BIN} (training, validation and test each need rows)`, { file, field: column });
  }
  const bins = Math.max(2, Math.min(MAX_BINS, Math.floor(n / ROWS_PER_BIN)));
  const order = Array.from({ length: n }, (_, i) => i).sort((a, b) => targets[a]! - targets[b]! || a - b);
  const labels = new Int32Array(n);
  order.forEach((row, rank) => (labels[row] = Math.floor((rank * bins) / n)));
  return { labels, names: Array.from({ length: bins }, (_, k) => `quantile bin ${k + 1} of ${bins}`) };
}
