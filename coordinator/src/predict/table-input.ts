import type { TableSteps } from '@netbreeder/shared-types';
import type { RawColumn } from '../datasets/raw-table.js';
import { encodeColumns } from '../datasets/table-encoding.js';
import { NUMBER_CELL } from '../importers/csv-records.js';
import { PredictError } from './predict-error.js';

/** Turns CSV records of new data (fields in `header` order) into model input, `featureCount` values per record. */
export type TableRowsEncoder = (records: readonly (readonly string[])[], lines: readonly number[]) => Float32Array;

/**
 * The table transform of `preprocessing.json` for a CSV with this header: the training columns
 * are looked up by name (extra columns are ignored, the label column may be absent), each chunk of
 * records is typed as the importer types them and encoded by the importer's own
 * {@link encodeColumns}. Refuses a header without a training column, naming every one missing.
 * Pure: `file` only names the input in errors.
 */
export function tableRowsEncoder(steps: TableSteps, header: readonly string[], file: string): TableRowsEncoder {
  const names = header.map((h) => h.trim());
  const missing = steps.columns.filter((c) => !names.includes(c.name)).map((c) => `"${c.name}"`);
  if (missing.length) {
    throw new PredictError(
      'NB_PREDICT_MISSING_COLUMN',
      `${file}: line 1: the header lacks column${missing.length === 1 ? '' : 's'} ${missing.join(', ')} that the model was trained on; add ${missing.length === 1 ? 'it' : 'them'} (the training header's names, any order; extra columns are ignored)`,
    );
  }
  const index = steps.columns.map((c) => names.indexOf(c.name));
  const tokens = new Set(steps.missing.tokens);
  return (records, lines) => {
    const count = records.length;
    records.forEach((fields, k) => {
      if (fields.length !== names.length) {
        throw new PredictError('NB_PREDICT_BAD_CELL', `${file}: line ${lines[k]} has ${fields.length} fields, the header has ${names.length}; give every row one value per column (quote fields that contain the delimiter)`);
      }
    });
    const columns: RawColumn[] = steps.columns.map((step, c) => {
      const at = index[c]!;
      if (step.kind === 'numeric') {
        const values = new Float64Array(count);
        for (let k = 0; k < count; k++) {
          const cell = records[k]![at]!.trim();
          if (tokens.has(cell)) values[k] = Number.NaN;
          else if (NUMBER_CELL.test(cell)) values[k] = Number(cell);
          else {
            throw new PredictError(
              'NB_PREDICT_BAD_CELL',
              `${file}: line ${lines[k]}: column "${step.name}" is numeric but holds "${cell.slice(0, 40)}"; write a number there or a missing-value token (${[...tokens].map((t) => `"${t}"`).join(', ')})`,
            );
          }
        }
        return { kind: 'numeric', name: step.name, values };
      }
      // Codes index the training categories directly; an unseen or missing category is -1 (all zeros).
      const position = new Map(step.categories.map((name, p) => [name, p]));
      const codes = new Int32Array(count);
      for (let k = 0; k < count; k++) {
        const cell = records[k]![at]!.trim();
        codes[k] = tokens.has(cell) ? -1 : (position.get(cell) ?? -1);
      }
      return { kind: 'categorical', name: step.name, codes, values: step.categories };
    });
    const all = Int32Array.from({ length: count }, (_, k) => k);
    return encodeColumns(columns, steps.columns, steps.featureCount, steps.standardized, all);
  };
}
