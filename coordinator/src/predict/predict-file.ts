import { createWriteStream, type WriteStream } from 'node:fs';
import { readFile, rename, rm, stat } from 'node:fs/promises';
import { join } from 'node:path';
import { once } from 'node:events';
import type { LoadedChampion } from './load-champion.js';
import { csvChunks } from './csv-chunks.js';
import { idxInput } from './idx-input.js';
import { imageInput, listImages } from './image-input.js';
import { PredictError } from './predict-error.js';
import { sequencesInput, seriesInput } from './series-input.js';
import { tableRowsEncoder, type TableRowsEncoder } from './table-input.js';

export interface PredictOutcome {
  /** Inputs predicted (rows written). */
  predicted: number;
  /** Inputs refused and left out (images that cannot be decoded), with why. */
  failed: Array<{ id: string; message: string }>;
}

export interface PredictFileOptions {
  /** Output CSV file; written to a temporary file beside it and renamed when complete. Absent: `write` gets the lines. */
  out?: string;
  write?: (text: string) => void;
  /** Called after each chunk with the inputs done so far. */
  onProgress?: (done: number) => void;
}

/** A CSV field, quoted when it holds a delimiter, quote or line break (RFC 4180). */
const field = (s: string): string => (/[",\r\n]/.test(s) ? `"${s.replaceAll('"', '""')}"` : s);

/**
 * Predicts every input of `input` (a CSV file, an image folder, an IDX file, a CSV of time steps or
 * of labelled sequences, as the export's `preprocessing.json` expects) and writes a CSV: `id` (the
 * CSV line, the image path relative to the folder, the IDX sample index, the line of a window's
 * last step, or a sequence's id), the predicted class, one probability per class (a regression
 * export: `predicted_<target column>`, the number in the target's units). Images that
 * cannot be used are named in the outcome and the rest predicted; any other bad input throws and
 * leaves no output file.
 */
export async function predictFile(model: LoadedChampion, input: string, options: PredictFileOptions): Promise<PredictOutcome> {
  const { classNames, steps } = model.preprocessing;
  const tmp = options.out ? `${options.out}.partial-${process.pid}` : null;
  const stream: WriteStream | null = tmp ? createWriteStream(tmp) : null;
  // A write that fails (a full disk), or one still in flight when a bad input destroys the stream,
  // is an 'error' event: kept here and thrown from the next write, never left unhandled.
  let streamError: Error | null = null;
  stream?.on('error', (err) => void (streamError ??= err));
  const emit = async (text: string): Promise<void> => {
    if (!stream) return void options.write?.(text);
    if (streamError) throw streamError;
    if (!stream.write(text)) await once(stream, 'drain');
  };
  const outcome: PredictOutcome = { predicted: 0, failed: [] };
  const target = model.preprocessing.target;
  const writeRows = async (ids: readonly string[], features: Float32Array): Promise<void> => {
    let text = '';
    if (target) {
      const values = model.predictNumbers(features, ids.length);
      ids.forEach((id, i) => (text += `${field(id)},${values[i]}\n`));
    } else {
      const { probabilities, classes } = model.predictPrepared(features, ids.length);
      ids.forEach((id, i) => {
        const p = Array.from(probabilities.subarray(i * classNames.length, (i + 1) * classNames.length), String);
        text += `${[field(id), field(classNames[classes[i]!]!), ...p].join(',')}\n`;
      });
    }
    await emit(text);
    outcome.predicted += ids.length;
    options.onProgress?.(outcome.predicted);
  };
  try {
    const header = target ? ['id', `predicted_${target.column}`] : ['id', 'predicted_class', ...classNames.map((n) => `probability_${n}`)];
    await emit(`${header.map(field).join(',')}\n`);
    if (steps.kind === 'table') {
      let encode: TableRowsEncoder | null = null;
      for await (const chunk of csvChunks(input, steps.delimiter)) {
        if (!encode) {
          const header = chunk.records.shift();
          chunk.lines.shift();
          if (!header) throw new PredictError('NB_PREDICT_BAD_CELL', `${input} is empty; give a CSV with the training header and one row per input`);
          encode = tableRowsEncoder(steps, header, input);
        }
        if (chunk.records.length) await writeRows(chunk.lines.map(String), encode(chunk.records, chunk.lines));
      }
    } else if (steps.kind === 'images') {
      const isFolder = (await stat(input)).isDirectory();
      const files = isFolder ? await listImages(input) : [input];
      for (let start = 0; start < files.length; start += 256) {
        const ids: string[] = [];
        const samples: Float32Array[] = [];
        for (const id of files.slice(start, start + 256)) {
          const path = isFolder ? join(input, id) : id;
          try {
            samples.push(imageInput(await readFile(path), path, steps));
            ids.push(id);
          } catch (err) {
            if (!(err instanceof PredictError)) throw err;
            outcome.failed.push({ id, message: err.message });
          }
        }
        const features = new Float32Array(samples.reduce((n, s) => n + s.length, 0));
        samples.forEach((s, i) => features.set(s, i * s.length));
        if (ids.length) await writeRows(ids, features);
      }
    } else if (steps.kind === 'series-windows' || steps.kind === 'sequences') {
      const text = await readFile(input, 'utf8');
      const { ids, features } = steps.kind === 'sequences' ? sequencesInput(text, input, steps) : seriesInput(text, input, steps);
      const size = features.length / Math.max(1, ids.length);
      for (let start = 0; start < ids.length; start += 4096) {
        const end = Math.min(ids.length, start + 4096);
        await writeRows(ids.slice(start, end), features.subarray(start * size, end * size));
      }
    } else {
      const { features, count } = await idxInput(input, steps);
      const size = features.length / Math.max(1, count);
      for (let start = 0; start < count; start += 4096) {
        const n = Math.min(4096, count - start);
        await writeRows(Array.from({ length: n }, (_, i) => String(start + i)), features.subarray(start * size, (start + n) * size));
      }
    }
    if (stream && tmp && options.out) {
      stream.end();
      await once(stream, 'finish');
      if (streamError) throw streamError;
      await rename(tmp, options.out);
    }
    return outcome;
  } catch (err) {
    if (stream && tmp) {
      stream.destroy();
      // Not events.once: it would reject on the error of a write still in flight, hiding the input's.
      if (!stream.closed) await new Promise<void>((resolve) => stream.once('close', () => resolve()));
      await rm(tmp, { force: true });
    }
    throw err;
  }
}
