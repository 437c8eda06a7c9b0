import { readFile } from 'node:fs/promises';
import { join } from 'node:path';
import * as tf from '@tensorflow/tfjs';
import { PREPROCESSING_FILE_VERSION, preprocessingFileValidator, type PreprocessingFile } from '@netbreeder/shared-types';
import { averagePredictions } from '../champion/ensemble-average.js';
import { PredictError } from './predict-error.js';
import { tableRowsEncoder } from './table-input.js';

/** What `predict(rows)` gives for one row: a classifier's class and probabilities, or a regression model's number. */
export type RowPrediction = { className: string; probabilities: number[] } | { value: number };

/** A champion (or averaging ensemble) export, loaded and ready to predict. */
export interface LoadedChampion {
  /** The export's `preprocessing.json`: how raw input becomes model input, and the class order. */
  preprocessing: PreprocessingFile;
  /** The trained model, or the ensemble's members. */
  models: tf.LayersModel[];
  /** Class probabilities (mean over members) of `count` prepared inputs, [count × classes] row by row, and each row's most probable class (a regression export: the standardised outputs, one per input). */
  predictPrepared(features: Float32Array, count: number): { probabilities: Float32Array; classes: Int32Array };
  /** A regression export: the predicted target of `count` prepared inputs, in the target's own units (mean over members). Throws for a classifier. */
  predictNumbers(features: Float32Array, count: number): Float64Array;
  /** For a table export: raw rows (column name → cell; null or absent is missing) to the predicted class name and its probabilities, or (regression) the predicted number in the target's units. */
  predict(rows: ReadonlyArray<Record<string, string | number | null | undefined>>): RowPrediction[];
  dispose(): void;
}

const BATCH = 256;

/**
 * Loads an export folder in plain Node with the `@tensorflow/tfjs` package alone (no native
 * backend): `model.json` and the weights file it names are read from disk and handed to
 * `tf.io.fromMemory` (`tf.loadLayersModel('file://…')` needs the native package). A folder with
 * `ensemble.json` loads every member. Refuses a folder without `preprocessing.json` or with one
 * of another version.
 */
export async function loadChampion(dir: string): Promise<LoadedChampion> {
  const preprocessing = await readPreprocessing(dir);
  const ensemble = await readJson(join(dir, 'ensemble.json'), false);
  const modelFiles = ensemble ? (ensemble as { members: Array<{ model: string }> }).members.map((m) => m.model) : ['model.json'];
  const models: tf.LayersModel[] = [];
  for (const name of modelFiles) models.push(await loadLayersModelFromFiles(dir, name));
  const target = preprocessing.target;
  // Outputs per input: one per class, or the one standardised number of a regression model.
  const classes = target ? 1 : preprocessing.classNames.length;
  const size = preprocessing.inputShape.reduce((a, b) => a * b, 1);

  const predictPrepared = (features: Float32Array, count: number) => {
    if (features.length !== count * size) throw new PredictError('NB_PREDICT_WRONG_INPUT', `${features.length} values are not ${count} inputs of shape [${preprocessing.inputShape.join(', ')}]`);
    const perModel = models.map((model) => {
      const out = new Float32Array(count * classes);
      for (let start = 0; start < count; start += BATCH) {
        const n = Math.min(BATCH, count - start);
        const probs = tf.tidy(() => (model.predict(tf.tensor(features.subarray(start * size, (start + n) * size), [n, ...preprocessing.inputShape])) as tf.Tensor).dataSync());
        out.set(probs, start * classes);
      }
      return out;
    });
    const { mean, predictions } = averagePredictions(perModel, classes);
    return { probabilities: mean, classes: predictions };
  };

  const predictNumbers = (features: Float32Array, count: number): Float64Array => {
    if (!target) throw new PredictError('NB_PREDICT_WRONG_INPUT', 'this export is a classifier; call predictPrepared for its class probabilities');
    return Float64Array.from(predictPrepared(features, count).probabilities, (v) => v * target.std + target.mean);
  };

  const predict: LoadedChampion['predict'] = (rows) => {
    const steps = preprocessing.steps;
    if (steps.kind !== 'table') throw new PredictError('NB_PREDICT_WRONG_INPUT', `predict(rows) takes table rows, but this model reads ${steps.kind}; prepare inputs as preprocessing.json says and call predictPrepared`);
    const header = steps.columns.map((c) => c.name);
    const blank = steps.missing.tokens[0] ?? '';
    const records = rows.map((row) => header.map((name) => (row[name] == null ? blank : String(row[name]))));
    const features = tableRowsEncoder(steps, header, 'rows')(records, records.map((_, i) => i + 1));
    if (target) return Array.from(predictNumbers(features, rows.length), (value) => ({ value }));
    const { probabilities, classes: predicted } = predictPrepared(features, rows.length);
    return rows.map((_, i) => ({ className: preprocessing.classNames[predicted[i]!]!, probabilities: Array.from(probabilities.subarray(i * classes, (i + 1) * classes)) }));
  };

  return { preprocessing, models, predictPrepared, predictNumbers, predict, dispose: () => models.forEach((m) => m.dispose()) };
}

/** Reads and checks an export's `preprocessing.json`. */
export async function readPreprocessing(dir: string): Promise<PreprocessingFile> {
  const raw = (await readJson(join(dir, 'preprocessing.json'), true)) as { version?: unknown };
  if (raw.version !== PREPROCESSING_FILE_VERSION) {
    throw new PredictError('NB_PREDICT_BAD_EXPORT', `${join(dir, 'preprocessing.json')} has version ${JSON.stringify(raw.version)}, this netbreeder reads version ${PREPROCESSING_FILE_VERSION}; use the netbreeder version that wrote the export, or export the run again`);
  }
  const issues = preprocessingFileValidator.issues(raw);
  if (issues.length) throw new PredictError('NB_PREDICT_BAD_EXPORT', `${join(dir, 'preprocessing.json')} is damaged (${issues[0]!.path || '(root)'} ${issues[0]!.message}); export the run again`);
  return raw as PreprocessingFile;
}

/** A TensorFlow.js layers model from `dir/name` and the weights file its manifest names, through `tf.io.fromMemory`. */
async function loadLayersModelFromFiles(dir: string, name: string): Promise<tf.LayersModel> {
  const modelJson = (await readJson(join(dir, name), true)) as { modelTopology: object; weightsManifest: Array<{ paths: string[]; weights: tf.io.WeightsManifestEntry[] }> };
  const specs = modelJson.weightsManifest.flatMap((g) => g.weights);
  const parts: Buffer[] = [];
  for (const path of modelJson.weightsManifest.flatMap((g) => g.paths)) {
    parts.push(await readFile(join(dir, path)).catch(() => {
      throw new PredictError('NB_PREDICT_NO_EXPORT', `${join(dir, path)}, the weights ${name} names, cannot be read; copy the whole export folder`);
    }));
  }
  const bytes = Buffer.concat(parts);
  const weightData = bytes.buffer.slice(bytes.byteOffset, bytes.byteOffset + bytes.byteLength) as ArrayBuffer;
  return tf.loadLayersModel(tf.io.fromMemory({ modelTopology: modelJson.modelTopology, weightSpecs: specs, weightData }));
}

async function readJson(file: string, required: boolean): Promise<unknown> {
  let text: string;
  try {
    text = await readFile(file, 'utf8');
  } catch {
    if (!required) return null;
    throw new PredictError('NB_PREDICT_NO_EXPORT', `${file} is missing; point --model at a folder written by 'netbreeder export' (or the demo), or export the run again with this version`);
  }
  try {
    return JSON.parse(text);
  } catch (err) {
    throw new PredictError('NB_PREDICT_BAD_EXPORT', `${file} is not valid JSON (${(err as Error).message}); export the run again`);
  }
}
