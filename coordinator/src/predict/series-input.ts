import type { SeriesSteps } from '@netbreeder/shared-types';
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
  let series;
  try {
    series = parseSeriesCsv(text, file, { delimiter: steps.delimiter, channels: steps.channels.map((c) => c.name), target: null });
  } catch (err) {
    if (err instanceof DatasetError) throw new PredictError(err.code === 'NB_DATASET_NO_SUCH_COLUMN' ? 'NB_PREDICT_MISSING_COLUMN' : 'NB_PREDICT_BAD_CELL', err.message);
    throw err;
  }
  const count = series.lines.length - steps.window + 1;
  if (count < 1) {
    throw new PredictError('NB_PREDICT_BAD_CELL', `${file} has ${series.lines.length} time steps but the model reads windows of ${steps.window}; give at least ${steps.window} rows`);
  }
  const starts = Array.from({ length: count }, (_, i) => i);
  return { ids: starts.map((s) => String(series.lines[s + steps.window - 1])), features: windowFeatures(series, steps.channels, steps.window, starts) };
}
