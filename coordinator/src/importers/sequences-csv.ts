import { DatasetError } from '../datasets/dataset-error.js';
import type { RawSequence } from '../datasets/sequence-samples.js';
import { forEachCsvRecord, NUMBER_CELL } from './csv-records.js';

export interface SequencesCsvOptions {
  delimiter: string;
  idColumn: string;
  timeColumn: string;
  channels: readonly string[];
  /** Null for new data (predict), where the label column may be absent. */
  labelColumn: string | null;
}

/**
 * Reads a long-format CSV (one row per step of one sample) into samples in order of first
 * appearance, each with its steps ordered by the time column. Refuses, naming file, line and
 * column: a ragged row, a word in a channel or time column, a time repeated within a sample, a
 * sample whose label changes. Pure: `file` only names the input in errors.
 */
export function parseSequencesCsv(text: string, file: string, options: SequencesCsvOptions): RawSequence[] {
  let header: string[] | null = null;
  let at = { id: -1, time: -1, label: -1, channels: [] as number[] };
  const samples = new Map<string, { sample: RawSequence; steps: Array<{ time: number; line: number; values: number[] }> }>();
  const number = (cell: string, line: number, name: string): number => {
    if (NUMBER_CELL.test(cell)) return Number(cell);
    throw new DatasetError('NB_DATASET_NOT_A_NUMBER', `${file}: line ${line}: column "${name}" holds "${cell.slice(0, 40)}", not a number; every step needs a number there (fill or drop the step)`, {
      file,
      line,
      field: name,
    });
  };
  forEachCsvRecord(text, options.delimiter, file, (fields, line) => {
    if (!header) {
      const names = fields.map((f) => f.trim());
      header = names;
      const find = (name: string, setting: string): number => {
        const i = names.indexOf(name);
        if (i < 0) throw new DatasetError('NB_DATASET_NO_SUCH_COLUMN', `${file}: line 1: ${setting} names column "${name}", which is not in the header (${names.map((h) => `"${h}"`).join(', ')})`, { file, line: 1, field: name });
        return i;
      };
      at = {
        id: find(options.idColumn, 'idColumn'),
        time: find(options.timeColumn, 'timeColumn'),
        label: options.labelColumn === null ? -1 : find(options.labelColumn, 'labelColumn'),
        channels: options.channels.map((c) => find(c, 'channels')),
      };
      return;
    }
    if (fields.length !== header.length) {
      throw new DatasetError('NB_DATASET_BAD_CSV', `${file}: line ${line} has ${fields.length} field${fields.length === 1 ? '' : 's'}, the header has ${header.length}; every row needs one value per column (quote fields that contain the delimiter)`, {
        file,
        line,
      });
    }
    const id = fields[at.id]!.trim();
    const label = at.label >= 0 ? fields[at.label]!.trim() : undefined;
    let entry = samples.get(id);
    if (!entry) {
      entry = { sample: { id, line, ...(label !== undefined ? { label } : {}), values: new Float64Array(0), steps: 0 }, steps: [] };
      samples.set(id, entry);
    } else if (label !== undefined && entry.sample.label !== label) {
      throw new DatasetError(
        'NB_DATASET_BAD_LABEL',
        `${file}: line ${line}: sample "${id}" has label "${label}" here but "${entry.sample.label}" on line ${entry.sample.line}; a sample has one class: make its rows agree`,
        { file, line, field: options.labelColumn! },
      );
    }
    entry.steps.push({ time: number(fields[at.time]!.trim(), line, options.timeColumn), line, values: at.channels.map((c, k) => number(fields[c]!.trim(), line, options.channels[k]!)) });
  });
  if (!header || samples.size === 0) throw new DatasetError('NB_DATASET_EMPTY', `${file} has no rows; it needs a header row and one row per step of each sample`, { file });
  const width = options.channels.length;
  return [...samples.values()].map(({ sample, steps }) => {
    steps.sort((a, b) => a.time - b.time);
    for (let k = 1; k < steps.length; k++) {
      if (steps[k]!.time === steps[k - 1]!.time) {
        const [a, b] = [steps[k - 1]!.line, steps[k]!.line].sort((x, y) => x - y);
        throw new DatasetError('NB_DATASET_BAD_CSV', `${file}: line ${b}: sample "${sample.id}" has time ${steps[k]!.time} also on line ${a}; each step of a sample needs its own time: remove the duplicate row`, {
          file,
          line: b,
          field: options.timeColumn,
        });
      }
    }
    const values = new Float64Array(steps.length * width);
    steps.forEach((s, t) => values.set(s.values, t * width));
    return { ...sample, values, steps: steps.length };
  });
}
