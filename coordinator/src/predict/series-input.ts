import type { SequenceSteps, SeriesSteps } from '@netbreeder/shared-types';
import { sequenceFeatures } from '../datasets/sequence-samples.js';
import { parseSequencesCsv } from '../importers/sequences-csv.js';
import { DatasetError } from '../datasets/dataset-error.js';
import { windowFeatures } from '../datasets/series-windows.js';
import { parseSeriesCsv } from '../importers/series-csv.js';
import { PredictError } from './predict-error.js';

/**
 * The series transform of `preprocessing.json` for a new CSV of time steps: every full window
 * (each step that has `window - 1` steps before it), standardised with the training part's
 * scaling, read by the importer's own parser. The id of a window is the file line of its last
 * step. A file shorter than one window, or one with a bad cell, is refused naming the fix. Pure.
 */
export function seriesInput(text: string, file: string, steps: SeriesSteps): { ids: string[]; features: Float32Array } {
  const series = asPredictError(() => parseSeriesCsv(text, file, { delimiter: steps.delimiter, channels: steps.channels.map((c) => c.name), target: null }));
  const count = series.lines.length - steps.window + 1;
  if (count < 1) {
    throw new PredictError('NB_PREDICT_BAD_CELL', `${file} has ${series.lines.length} time steps but the model reads windows of ${steps.window}; give at least ${steps.window} rows`);
  }
  const starts = Array.from({ length: count }, (_, i) => i);
  return { ids: starts.map((s) => String(series.lines[s + steps.window - 1])), features: windowFeatures(series, steps.channels, steps.window, starts) };
}

/**
 * The sequences transform of `preprocessing.json` for a new long-format CSV: rows grouped by the
 * id column and ordered by the time column, as the importer reads them; each sample standardised,
 * cut or padded to the training length. The id of an input is its sample id. Pure.
 */
export function sequencesInput(text: string, file: string, steps: SequenceSteps): { ids: string[]; features: Float32Array } {
  const channels = steps.channels.map((c) => c.name);
  const samples = asPredictError(() => parseSequencesCsv(text, file, { delimiter: steps.delimiter, idColumn: steps.idColumn, timeColumn: steps.timeColumn, channels, labelColumn: null }));
  return { ids: samples.map((s) => s.id), features: sequenceFeatures(samples, Int32Array.from(samples, (_, i) => i), steps.channels, steps.length) };
}

/** The importer's refusal as the predict command's: a missing column, or a bad cell. */
function asPredictError<T>(read: () => T): T {
  try {
    return read();
  } catch (err) {
    if (err instanceof DatasetError) throw new PredictError(err.code === 'NB_DATASET_NO_SUCH_COLUMN' ? 'NB_PREDICT_MISSING_COLUMN' : 'NB_PREDICT_BAD_CELL', err.message);
    throw err;
  }
}
