import { DEFAULT_MISSING_VALUE_TOKENS, MAX_AUTO_NUMERIC_CLASSES } from '@netbreeder/shared-types';
import { forEachCsvRecord, AUTO_NUMERIC_SHARE } from '../importers/index.js';
import { NUMBER_CELL } from '../datasets/number-cell.js';
import { DatasetError } from '../datasets/dataset-error.js';

/** Distinct cell texts kept per column; a column with more is free text, an id or a measurement. */
const MAX_DISTINCT = 1000;
/** Column names that say "this is what to predict" (the whole name, or its last word). */
const LABEL_WORDS = new Set(['label', 'class', 'target', 'outcome', 'y', 'category', 'result', 'verdict', 'grade', 'diagnosis', 'species']);
/** Column names that say "this names the row" (the whole name, or its last word). */
const ID_WORDS = new Set(['id', 'uuid', 'guid', 'index', 'row', 'no', 'nr']);
/** At most this many distinct non-number texts in a mostly numeric column are read as missing-value marks. */
const MAX_ODD_TOKENS = 3;
/** A text column with more distinct values than this (and than half its cells) is free text, not categories. */
const MAX_CATEGORIES = 100;

/** What one pass over a CSV column found. */
export interface ColumnProfile {
  name: string;
  numbers: number;
  others: number;
  missing: number;
  /** Count per distinct non-missing cell text, up to {@link MAX_DISTINCT} texts. */
  distinct: Map<string, number>;
  /** More than {@link MAX_DISTINCT} distinct texts were seen. */
  manyDistinct: boolean;
  /** Every non-missing cell is an integer one more than the one before (a row number). */
  counting: boolean;
  /** The first non-number cell and its line. */
  firstOther: { line: number; text: string } | null;
}

export interface CsvProfile {
  delimiter: string;
  rows: number;
  columns: ColumnProfile[];
}

/** The delimiter of a CSV text: the most frequent of comma, semicolon, tab and bar on its first line (comma on a tie). */
export function guessDelimiter(text: string): string {
  const firstLine = text.slice(0, Math.max(0, text.indexOf('\n')) || text.length);
  const counts = [',', ';', '\t', '|'].map((d) => ({ d, n: firstLine.split(d).length - 1 }));
  return counts.reduce((best, c) => (c.n > best.n ? c : best)).d;
}

/** Reads a CSV text with a header row once and describes each column. Pure; `file` names the input in errors. */
export function profileCsv(text: string, file: string, delimiter = guessDelimiter(text)): CsvProfile {
  const missingTokens = new Set<string>(DEFAULT_MISSING_VALUE_TOKENS);
  let columns: ColumnProfile[] = [];
  const last: Array<number | null> = [];
  let rows = 0;
  forEachCsvRecord(text, delimiter, file, (fields, line) => {
    if (rows++ === 0) {
      columns = fields.map((f) => ({ name: f.trim(), numbers: 0, others: 0, missing: 0, distinct: new Map(), manyDistinct: false, counting: true, firstOther: null }));
      return;
    }
    if (fields.length !== columns.length) {
      throw new DatasetError('NB_DATASET_BAD_CSV', `${file}: line ${line} has ${fields.length} fields, the header has ${columns.length}; every row needs one value per column (quote fields that contain the delimiter "${delimiter}")`);
    }
    fields.forEach((raw, c) => {
      const cell = raw.trim();
      const col = columns[c]!;
      if (missingTokens.has(cell)) {
        col.missing++;
        col.counting = false;
        return;
      }
      const count = col.distinct.get(cell);
      if (count !== undefined) col.distinct.set(cell, count + 1);
      else if (col.distinct.size < MAX_DISTINCT) col.distinct.set(cell, 1);
      else col.manyDistinct = true;
      if (NUMBER_CELL.test(cell)) {
        col.numbers++;
        const n = Number(cell);
        col.counting &&= Number.isInteger(n) && (last[c] == null || n === last[c]! + 1);
        last[c] = n;
      } else {
        col.others++;
        col.counting = false;
        col.firstOther ??= { line, text: cell };
      }
    });
  });
  if (columns.length === 0) throw new DatasetError('NB_DATASET_EMPTY', `${file} is empty; it needs a header row and data rows`);
  if (rows < 2) throw new DatasetError('NB_DATASET_EMPTY', `${file} has a header but no data rows`);
  return { delimiter, rows: rows - 1, columns };
}

/** What a column becomes in the run file, and why. */
export interface ColumnGuess {
  name: string;
  role: 'label' | 'numeric' | 'categorical' | 'ignored';
  reason: string;
  missing: number;
}

export interface CsvGuess {
  delimiter: string;
  rows: number;
  labelColumn: string;
  labelReason: string;
  task: 'classification' | 'regression';
  taskReason: string;
  columns: ColumnGuess[];
  /** Texts beyond the default missing-value marks that the guess reads as missing (a stray "-" in a numeric column). */
  extraMissingValues: string[];
  /** `drop-row` when regression targets are missing (a target is never filled), else `fill`. */
  missing: 'fill' | 'drop-row';
}

export interface CsvGuessOptions {
  /** The label column the user named; its presence is checked. */
  label?: string;
  /** The task the user named. */
  task?: 'classification' | 'regression';
}

const words = (name: string): string[] => name.replace(/([a-z0-9])([A-Z])/g, '$1 $2').toLowerCase().split(/[^a-z0-9]+/).filter(Boolean);
const namedLike = (name: string, set: Set<string>): boolean => {
  const w = words(name);
  return set.has(w.join('')) || (w.length > 0 && set.has(w[w.length - 1]!));
};
const plural = (n: number, one: string, many = `${one}s`): string => `${n.toLocaleString('en-US')} ${n === 1 ? one : many}`;
const present = (c: ColumnProfile): number => c.numbers + c.others;

/** Why a column cannot be a feature or the label (an id, a constant, free text), or null. */
function unusable(c: ColumnProfile): string | null {
  if (present(c) === 0) return 'every cell is empty';
  if (namedLike(c.name, ID_WORDS)) return 'its name says it identifies the row';
  if (c.counting && present(c) >= 3) return 'it counts the rows (1, 2, 3, …)';
  if (c.distinct.size === 1 && !c.manyDistinct) return 'the same value in every row';
  if (c.others > 0 && numberShare(c) <= AUTO_NUMERIC_SHARE) {
    if (c.distinct.size === present(c) && present(c) >= 20) return 'every row has its own text (an id or free text)';
    if (c.manyDistinct || (c.distinct.size > MAX_CATEGORIES && c.distinct.size > present(c) / 2)) return `${c.manyDistinct ? `more than ${MAX_DISTINCT}` : c.distinct.size} distinct texts: free text, not categories`;
  }
  return null;
}

const numberShare = (c: ColumnProfile): number => c.numbers / Math.max(1, present(c));

/** The distinct non-number texts of a mostly numeric column, when they are few and short enough to be missing-value marks. */
function missingMarks(c: ColumnProfile): string[] | null {
  const odd = [...c.distinct.keys()].filter((t) => !NUMBER_CELL.test(t));
  return odd.length <= MAX_ODD_TOKENS && odd.every((t) => t.length <= 12) ? odd : null;
}

/** Picks the label column: the one named, else the last whose name says label, else the last usable column. */
function chooseLabel(columns: ColumnProfile[], options: CsvGuessOptions): { column: ColumnProfile; reason: string } {
  if (options.label !== undefined) {
    const named = columns.find((c) => c.name === options.label);
    if (!named) throw new DatasetError('NB_DATASET_NO_SUCH_COLUMN', `--label names column "${options.label}", which is not in the header (${columns.map((c) => `"${c.name}"`).join(', ')})`);
    return { column: named, reason: 'you named it (--label)' };
  }
  const candidates = columns.filter((c) => !unusable(c) && c.distinct.size >= 2);
  const byName = candidates.filter((c) => namedLike(c.name, LABEL_WORDS)).at(-1);
  if (byName) return { column: byName, reason: `its name says it holds what to predict ("${byName.name}")` };
  const lastUsable = candidates.at(-1);
  if (!lastUsable) throw new DatasetError('NB_DATASET_NO_LABEL_COLUMN', 'no column can be the label: every column is an id, constant, empty or free text; name one with --label COLUMN');
  return { column: lastUsable, reason: 'no column is named like a label (label, class, target, outcome, …), so the last usable column, where tables usually keep it (common practice)' };
}

function chooseTask(label: ColumnProfile, options: CsvGuessOptions): { task: CsvGuess['task']; reason: string } {
  if (options.task) return { task: options.task, reason: 'you named it (--task)' };
  const numeric = label.others === 0;
  const distinct = label.manyDistinct ? `more than ${MAX_DISTINCT}` : String(label.distinct.size);
  if (numeric && (label.manyDistinct || label.distinct.size > MAX_AUTO_NUMERIC_CLASSES)) {
    return { task: 'regression', reason: `"${label.name}" holds ${distinct} distinct numbers (more than ${MAX_AUTO_NUMERIC_CLASSES}): a number to predict` };
  }
  const top = [...label.distinct.entries()].sort((a, b) => b[1] - a[1]);
  const shown = top.slice(0, 6).map(([v, n]) => `${v} ${n}`).join(', ');
  return { task: 'classification', reason: `"${label.name}" holds ${distinct} classes (${shown}${top.length > 6 ? ', …' : ''})` };
}

/** How a feature column enters the run file: numeric, categorical or left out, and the texts it reads as missing. */
function featureGuess(c: ColumnProfile): { guess: ColumnGuess; marks: string[] } {
  const base = { name: c.name, missing: c.missing };
  const why = unusable(c);
  if (why) return { guess: { ...base, role: 'ignored', reason: why }, marks: [] };
  if (c.others === 0) return { guess: { ...base, role: 'numeric', reason: 'every cell is a number' }, marks: [] };
  const share = numberShare(c);
  if (share <= AUTO_NUMERIC_SHARE) return { guess: { ...base, role: 'categorical', reason: `${plural(c.distinct.size, 'distinct value')}` }, marks: [] };
  const marks = missingMarks(c);
  const first = c.firstOther!;
  if (marks) {
    const list = marks.map((m) => `"${m}"`).join(', ');
    return { guess: { ...base, missing: c.missing + c.others, role: 'numeric', reason: `${(share * 100).toFixed(1)}% numbers; ${list} (first on line ${first.line}) read as missing` }, marks };
  }
  return {
    guess: { ...base, role: 'ignored', reason: `${(share * 100).toFixed(1)}% numbers but ${plural(c.others, 'cell')} of words (first "${first.text.slice(0, 20)}" on line ${first.line}): fix them and take the column back in` },
    marks: [],
  };
}

/**
 * Guesses how to read a CSV table as a run's dataset: the label column (and why), the task, each
 * feature column's kind (numeric, categorical, or left out with the reason) and the missing-value
 * handling. Pure: the profile comes from {@link profileCsv}.
 */
export function guessCsvSource(profile: CsvProfile, options: CsvGuessOptions = {}): CsvGuess {
  const label = chooseLabel(profile.columns, options);
  const task = chooseTask(label.column, options);
  const extra = new Set<string>();
  const columns = profile.columns.map((c): ColumnGuess => {
    if (c === label.column) return { name: c.name, role: 'label', reason: task.task === 'regression' ? 'the number to predict' : 'the class to predict', missing: c.missing };
    const { guess, marks } = featureGuess(c);
    for (const m of marks) extra.add(m);
    return guess;
  });
  if (!columns.some((c) => c.role === 'numeric' || c.role === 'categorical')) {
    throw new DatasetError('NB_DATASET_NO_FEATURES', `no feature column is left besides the label "${label.column.name}" (${columns.filter((c) => c.role === 'ignored').map((c) => `${c.name}: ${c.reason}`).join('; ')})`);
  }
  return {
    delimiter: profile.delimiter,
    rows: profile.rows,
    labelColumn: label.column.name,
    labelReason: label.reason,
    task: task.task,
    taskReason: task.reason,
    columns,
    extraMissingValues: [...extra],
    missing: task.task === 'regression' && label.column.missing > 0 ? 'drop-row' : 'fill',
  };
}
