import type { SeriesWindowsSource } from '@netbreeder/shared-types';
import { DatasetError } from '../datasets/dataset-error.js';
import type { RawSeries } from '../datasets/series-windows.js';
import { forEachCsvRecord, NUMBER_CELL } from './csv-records.js';

export interface SeriesCsvOptions {
  delimiter: string;
  channels: readonly string[];
  /** The target column and how to read it; null for new data (predict), where it may be absent. */
  target: { column: string; task: SeriesWindowsSource['task'] } | null;
}

/**
 * Reads a CSV of time steps (header row, then one row per step in time order) into a
 * {@link RawSeries}: the channel columns as numbers, the target column as text (classification) or
 * numbers (regression). Every channel cell and regression target must be a number. Pure: `file`
 * only names the input in errors, which name the line and column of the first problem.
 */
export function parseSeriesCsv(text: string, file: string, options: SeriesCsvOptions): RawSeries {
  let header: string[] | null = null;
  let channelAt: number[] = [];
  let targetAt = -1;
  const columns: number[][] = options.channels.map(() => []);
  const lines: number[] = [];
  const labels: string[] = [];
  const numbers: number[] = [];
  const regression = options.target?.task === 'regression';
  const number = (cell: string, line: number, name: string, what: string): number => {
    if (NUMBER_CELL.test(cell)) return Number(cell);
    throw new DatasetError(
      'NB_DATASET_NOT_A_NUMBER',
      `${file}: line ${line}: ${what} "${name}" holds "${cell.slice(0, 40)}", not a number; every step needs a number there (a series has no missing values: fill or drop the step)`,
      { file, line, field: name },
    );
  };
  forEachCsvRecord(text, options.delimiter, file, (fields, line) => {
    if (!header) {
      header = fields.map((f) => f.trim());
      const names: string[] = header;
      const list = names.map((h) => `"${h}"`).join(', ');
      const find = (name: string, setting: string): number => {
        const at = names.indexOf(name);
        if (at < 0) throw new DatasetError('NB_DATASET_NO_SUCH_COLUMN', `${file}: line 1: ${setting} names column "${name}", which is not in the header (${list})`, { file, line: 1, field: name });
        return at;
      };
      channelAt = options.channels.map((name) => find(name, 'channels'));
      if (options.target) targetAt = find(options.target.column, 'labelColumn');
      return;
    }
    const names: string[] = header;
    if (fields.length !== names.length) {
      throw new DatasetError(
        'NB_DATASET_BAD_CSV',
        `${file}: line ${line} has ${fields.length} field${fields.length === 1 ? '' : 's'}, the header has ${names.length}; every row needs one value per column (quote fields that contain the delimiter)`,
        { file, line },
      );
    }
    channelAt.forEach((at, c) => columns[c]!.push(number(fields[at]!.trim(), line, options.channels[c]!, 'channel column')));
    if (targetAt >= 0) {
      const cell = fields[targetAt]!.trim();
      if (regression) numbers.push(number(cell, line, options.target!.column, 'the regression target column'));
      else if (cell === '') throw new DatasetError('NB_DATASET_MISSING_VALUE', `${file}: line ${line}: the label column "${options.target!.column}" is empty; every step needs a class`, { file, line, field: options.target!.column });
      else labels.push(cell);
    }
    lines.push(line);
  });
  if (!header) throw new DatasetError('NB_DATASET_EMPTY', `${file} is empty; it needs a header row and one row per time step`, { file });
  if (lines.length === 0) throw new DatasetError('NB_DATASET_EMPTY', `${file} has a header but no time steps`, { file });
  const column = options.target?.column ?? '';
  return {
    file,
    channels: [...options.channels],
    values: columns.map((c) => Float64Array.from(c)),
    lines: Int32Array.from(lines),
    ...(options.target ? { target: regression ? { column, numbers: Float64Array.from(numbers) } : { column, labels } } : {}),
  };
}
