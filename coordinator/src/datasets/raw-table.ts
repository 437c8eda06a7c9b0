/** The typed but not yet encoded table an importer reads (the CSV importer, say); see table-encoding.ts. */

/** A numeric feature column: one value per row, `NaN` where the cell was missing. */
export interface RawNumericColumn {
  kind: 'numeric';
  name: string;
  values: Float64Array;
}

/** A categorical feature column: per row an index into `values` (first-seen order), -1 where missing. */
export interface RawCategoricalColumn {
  kind: 'categorical';
  name: string;
  codes: Int32Array;
  values: string[];
}

export type RawColumn = RawNumericColumn | RawCategoricalColumn;

/** A CSV table read and typed, not yet encoded: encoding is fitted after the split, on training rows. */
export interface RawTable {
  file: string;
  labelColumn: string;
  rowCount: number;
  /** Line of the file each row starts on (for messages). */
  lines: Int32Array;
  /** Class index of each row, into `classNames` (regression: its target quantile bin). */
  labels: Int32Array;
  /** Distinct labels, sorted (numbers by value, then text); regression: the quantile bins' names. */
  classNames: string[];
  /** Regression only: the target of each row, in its own units. */
  targets?: Float64Array;
  /** Feature columns in header order. */
  columns: RawColumn[];
  /** Rows left out for a missing feature or target (under `missing: "drop-row"`). */
  droppedRows: number;
  ignoredColumns: string[];
}

