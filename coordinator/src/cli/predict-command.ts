import { stat } from 'node:fs/promises';
import { parseArgs } from 'node:util';
import { initBackend } from '@netbreeder/worker';
import { loadChampion } from '../predict/load-champion.js';
import { predictFile } from '../predict/predict-file.js';
import { NetbreederError } from '@netbreeder/shared-types';

export const PREDICT_HELP = `netbreeder predict: run an exported champion (or ensemble) on new data.

Usage: netbreeder predict --model DIR --input FILE|FOLDER [--out FILE]

DIR is a folder written by 'netbreeder export' or the demo (its ensemble/ sub-folder for the
averaging ensemble). The input must be what the model was trained on, as DIR/preprocessing.json
says: a CSV with the training header (extra columns ignored, the label column may be absent), a
folder of PNG or JPEG images (sub-folders included) or one image, or an IDX sample file.
Writes a CSV: id (CSV line, image path, or IDX sample index), predicted class, one probability
per class; to stdout, or to FILE (written complete, then renamed into place). Images that cannot
be decoded are named on stderr, the rest predicted, and the exit code is 1.

Examples:
  netbreeder predict --model ./champion --input new-rows.csv --out predictions.csv
  netbreeder predict --model ./champion/ensemble --input ./tiles
`;

export async function predictCommand(argv: string[], out: NodeJS.WritableStream = process.stdout, err: NodeJS.WritableStream = process.stderr): Promise<number> {
  const { values } = parseArgs({
    args: argv,
    options: { model: { type: 'string' }, input: { type: 'string' }, out: { type: 'string' }, help: { type: 'boolean', short: 'h' } },
  });
  if (values.help) return void out.write(PREDICT_HELP), 0;
  if (!values.model || !values.input) throw new NetbreederError('NB_BAD_USAGE', 'predict needs --model DIR and --input FILE|FOLDER (see netbreeder predict --help)');
  await stat(values.input).catch(() => {
    throw new NetbreederError('NB_BAD_USAGE', `${values.input} does not exist; give --input the CSV file, image folder or IDX file to predict`);
  });
  // The backend the coordinator scores champions on (wasm, or the native one where it installs).
  await initBackend();
  const model = await loadChampion(values.model);
  try {
    let reported = 0;
    const outcome = await predictFile(model, values.input, {
      out: values.out,
      write: (text) => out.write(text),
      onProgress: (done) => {
        if (done - reported >= 100_000) {
          reported = done;
          err.write(`predicted ${done.toLocaleString('en-US')} inputs\n`);
        }
      },
    });
    for (const f of outcome.failed) err.write(`skipped ${f.id}: ${f.message}\n`);
    if (values.out) err.write(`wrote ${outcome.predicted} predictions to ${values.out}\n`);
    return outcome.failed.length ? 1 : 0;
  } finally {
    model.dispose();
  }
}
