import type { CsvSource } from '@netbreeder/shared-types';
import { DatasetError } from '../datasets/dataset-error.js';
import { forEachCsvRecord, NUMBER_CELL } from './csv-records.js';
import type { RawColumn, RawTable } from '../datasets/raw-table.js';
import { checkLabelTask, checkTargetCell, quantileBins } from '../datasets/regression-target.js';

export type { RawColumn, RawNumericColumn, RawCategoricalColumn, RawTable } from '../datasets/raw-table.js';

/** The CSV settings {@link parseCsvTable} needs, as the run file's `csv` source gives them (defaults filled in). */
export type CsvTableOptions = Pick<CsvSource, 'labelColumn' | 'delimiter' | 'categoricalColumns' | 'ignoreColumns' | 'missingValues' | 'missing' | 'task'>;

/** Share of numeric cells above which, under `categoricalColumns: "auto"`, a column is taken as numeric with typos. */
export const AUTO_NUMERIC_SHARE = 0.95;

const collator = new Intl.Collator('en', { numeric: true });

interface ColumnStats {
  numbers: number;
  others: number;
  missing: number;
  firstOther: { line: number; text: string } | null;
  firstMissingLine: number;
}

/**
 * Reads CSV text with a header row into a {@link RawTable}. Pure (`file` names the input in
 * errors). Two passes over the text: the first checks the shape and finds each column's kind, the
 * second stores the values typed, so memory stays near one number per cell. Throws a
 * {@link DatasetError} naming the file, line and column of the first problem.
 */
export function parseCsvTable(text: string, file: string, options: CsvTableOptions): RawTable {
  const missingTokens = new Set(options.missingValues);
  let header: string[] | null = null;
  let rows = 0;
  let stats: ColumnStats[] = [];
  let labelIndex = -1;
  const ignored = new Set(options.ignoreColumns);
  const labelCounts = new Map<string, number>();
  const regression = options.task === 'regression';

  forEachCsvRecord(text, options.delimiter, file, (fields, line) => {
    if (!header) {
      header = fields.map((f) => f.trim());
      checkHeader(header, file, options);
      labelIndex = header.indexOf(options.labelColumn);
      stats = header.map(() => ({ numbers: 0, others: 0, missing: 0, firstOther: null, firstMissingLine: 0 }));
      return;
    }
    if (fields.length !== header.length) {
      throw new DatasetError(
        'NB_DATASET_BAD_CSV',
        `${file}: line ${line} has ${fields.length} field${fields.length === 1 ? '' : 's'}, the header has ${header.length}; ` +
          'every row needs one value per column (quote fields that contain the delimiter)',
        { file, line },
      );
    }
    rows++;
    for (let c = 0; c < fields.length; c++) {
      const cell = fields[c]!.trim();
      if (c === labelIndex) {
        if (regression) {
          checkTargetCell(cell, missingTokens.has(cell), line, file, options);
          if (missingTokens.has(cell)) continue;
        } else if (missingTokens.has(cell)) {
          throw new DatasetError('NB_DATASET_MISSING_VALUE', `${file}: line ${line}: the label column "${options.labelColumn}" is empty or missing ("${cell}"); every row needs a class`, { file, line, field: options.labelColumn });
        }
        labelCounts.set(cell, (labelCounts.get(cell) ?? 0) + 1);
        continue;
      }
      const s = stats[c]!;
      if (missingTokens.has(cell)) {
        s.missing++;
        if (!s.firstMissingLine) s.firstMissingLine = line;
      } else if (NUMBER_CELL.test(cell)) s.numbers++;
      else {
        s.others++;
        if (!s.firstOther) s.firstOther = { line, text: cell };
      }
    }
  });

  if (!header) throw new DatasetError('NB_DATASET_EMPTY', `${file} is empty; it needs a header row and at least one data row`, { file });
  const names: string[] = header;
  if (rows === 0) throw new DatasetError('NB_DATASET_EMPTY', `${file} has a header but no data rows`, { file });

  checkLabelTask([...labelCounts.keys()], file, options);
  const kinds = names.map((name, c) => (c === labelIndex || ignored.has(name) ? null : columnKind(name, stats[c]!, file, options)));
  if (options.missing === 'error') {
    const first = names
      .map((name, c) => ({ name, line: kinds[c] ? stats[c]!.firstMissingLine : 0 }))
      .filter((m) => m.line > 0)
      .sort((a, b) => a.line - b.line)[0];
    if (first) {
      throw new DatasetError(
        'NB_DATASET_MISSING_VALUE',
        `${file}: line ${first.line}: column "${first.name}" has a missing value and the run file says missing: "error"; fill it, or choose missing: "fill" or "drop-row"`,
        { file, line: first.line, field: first.name },
      );
    }
  }

  const classNames = [...labelCounts.keys()].sort(collator.compare);
  const classIndex = new Map(classNames.map((name, i) => [name, i]));
  const columns: RawColumn[] = [];
  const columnOf: Array<RawColumn | null> = names.map((name, c) => {
    const kind = kinds[c];
    if (!kind) return null;
    const column: RawColumn =
      kind === 'numeric'
        ? { kind, name, values: new Float64Array(rows) }
        : { kind, name, codes: new Int32Array(rows), values: [] };
    columns.push(column);
    return column;
  });
  const dictionaries = columnOf.map((col) => (col?.kind === 'categorical' ? new Map<string, number>() : null));
  const lines = new Int32Array(rows);
  const labels = new Int32Array(rows);
  const targets = regression ? new Float64Array(rows) : null;
  const dropRows = options.missing === 'drop-row';
  let kept = 0;
  let first = true;
  forEachCsvRecord(text, options.delimiter, file, (fields, line) => {
    if (first) {
      first = false;
      return;
    }
    if (dropRows) {
      for (let c = 0; c < fields.length; c++) if ((columnOf[c] || c === labelIndex) && missingTokens.has(fields[c]!.trim())) return;
    }
    for (let c = 0; c < fields.length; c++) {
      const cell = fields[c]!.trim();
      if (c === labelIndex) {
        if (targets) targets[kept] = Number(cell);
        else labels[kept] = classIndex.get(cell)!;
        continue;
      }
      const col = columnOf[c];
      if (!col) continue;
      const missing = missingTokens.has(cell);
      if (col.kind === 'numeric') col.values[kept] = missing ? Number.NaN : Number(cell);
      else if (missing) col.codes[kept] = -1;
      else {
        const dict = dictionaries[c]!;
        let code = dict.get(cell);
        if (code === undefined) {
          code = col.values.length;
          dict.set(cell, code);
          col.values.push(cell);
        }
        col.codes[kept] = code;
      }
    }
    lines[kept] = line;
    kept++;
  });

  const trim = <T extends Int32Array | Float64Array>(a: T): T => (kept === rows ? a : (a.slice(0, kept) as T));
  for (const col of columns) {
    if (col.kind === 'numeric') col.values = trim(col.values);
    else col.codes = trim(col.codes);
  }
  if (kept === 0) throw new DatasetError('NB_DATASET_EMPTY', `${file}: every one of its ${rows} rows has a missing feature and missing: "drop-row" dropped them all`, { file });
  if (targets) {
    const keptTargets = trim(targets);
    const bins = quantileBins(keptTargets, file, options.labelColumn);
    return { file, labelColumn: options.labelColumn, rowCount: kept, lines: trim(lines), labels: bins.labels, classNames: bins.names, targets: keptTargets, columns, droppedRows: rows - kept, ignoredColumns: options.ignoreColumns };
  }
  const keptLabels = trim(labels);
  // Dropping rows may have removed every row of a class.
  const present = new Set(keptLabels);
  const remaining = classNames.filter((_, i) => present.has(i));
  if (remaining.length !== classNames.length) {
    const remap = new Map(remaining.map((name, i) => [classIndex.get(name)!, i]));
    for (let i = 0; i < keptLabels.length; i++) keptLabels[i] = remap.get(keptLabels[i]!)!;
  }
  return {
    file,
    labelColumn: options.labelColumn,
    rowCount: kept,
    lines: trim(lines),
    labels: keptLabels,
    classNames: remaining,
    columns,
    droppedRows: rows - kept,
    ignoredColumns: options.ignoreColumns,
  };
}

function checkHeader(header: string[], file: string, options: CsvTableOptions): void {
  const seen = new Map<string, number>();
  header.forEach((name, c) => {
    if (name === '') throw new DatasetError('NB_DATASET_BAD_CSV', `${file}: line 1: column ${c + 1} of the header has no name; give every column a name`, { file, line: 1 });
    if (seen.has(name)) {
      throw new DatasetError('NB_DATASET_BAD_CSV', `${file}: line 1: columns ${seen.get(name)! + 1} and ${c + 1} are both named "${name}"; column names must be unique`, { file, line: 1, field: name });
    }
    seen.set(name, c);
  });
  const list = header.map((h) => `"${h}"`).join(', ');
  const need = (name: string, setting: string): void => {
    if (!seen.has(name)) {
      throw new DatasetError('NB_DATASET_NO_SUCH_COLUMN', `${file}: line 1: ${setting} names column "${name}", which is not in the header (${list})`, { file, line: 1, field: name });
    }
  };
  need(options.labelColumn, 'labelColumn');
  for (const name of options.ignoreColumns) need(name, 'ignoreColumns');
  if (options.categoricalColumns !== 'auto') for (const name of options.categoricalColumns) need(name, 'categoricalColumns');
  if (header.length - 1 - options.ignoreColumns.filter((n) => n !== options.labelColumn).length < 1) {
    throw new DatasetError('NB_DATASET_EMPTY', `${file}: no feature columns are left besides the label column "${options.labelColumn}"`, { file, line: 1 });
  }
}

function columnKind(name: string, s: ColumnStats, file: string, options: CsvTableOptions): 'numeric' | 'categorical' {
  const listed = options.categoricalColumns !== 'auto';
  if (listed && options.categoricalColumns.includes(name)) return 'categorical';
  if (s.others === 0) return 'numeric';
  const share = s.numbers / (s.numbers + s.others);
  if (!listed && share <= AUTO_NUMERIC_SHARE) return 'categorical';
  const o = s.firstOther!;
  throw new DatasetError(
    'NB_DATASET_NOT_A_NUMBER',
    `${file}: line ${o.line}: column "${name}" is numeric ${listed ? '(it is not in categoricalColumns)' : `(${(share * 100).toFixed(1)}% of its cells are numbers)`} ` +
      `but holds "${o.text.slice(0, 40)}"${s.others > 1 ? ` and ${s.others - 1} more non-numbers` : ''}; fix the cell, list "${o.text.slice(0, 40)}" in missingValues, or list "${name}" in categoricalColumns`,
    { file, line: o.line, field: name },
  );
}
