/** `netbreeder init DATA`: look at a CSV table or an image folder and write a run file for it. */
import { existsSync } from 'node:fs';
import { readFile, stat, writeFile } from 'node:fs/promises';
import { basename, dirname, extname, isAbsolute, join, relative, resolve, sep } from 'node:path';
import { parseArgs } from 'node:util';
import { NetbreederError, RUN_FILE_SCHEMA_PATH } from '@netbreeder/shared-types';
import { guessCsvSource, profileCsv, type CsvGuess } from '../config/csv-guess.js';
import { csvSourceOf, draftBudget, draftRunFile, guessImageSettings, imageSourceOf, looksGray, type ImageFolderFacts } from '../config/run-file-draft.js';
import { runConfigFromText } from '../config/run-config.js';
import { decodeImage, listImageFolder } from '../importers/index.js';
import { createLogger } from '../logger.js';
import { prepareRun } from '../run/prepare-run.js';
import { defaultLocalWorkers } from './local-run.js';
import { DatasetError } from '../datasets/dataset-error.js';

export const INIT_HELP = `netbreeder init: look at your data and write a run file for it.

Usage: netbreeder init DATA [--label COLUMN] [--task classification|regression] [--out FILE] [--force]

DATA is a CSV table (a header row, one sample per row) or a folder with one sub-folder of PNG or
JPEG images per class. init guesses the label column and says why, each column's kind, the task,
the image size and channels, and budgets for the cores of this machine; checks the run file as
'netbreeder run' will (the data is read, split and encoded); and writes it next to DATA as
NAME-run.json. It keeps an existing file unless --force. The run file names run-file.schema.json,
so an editor completes and checks it.

Options:
  --label COLUMN   the label column of a CSV table, instead of the guess
  --task T         classification or regression, instead of the guess
  --out FILE       where to write the run file       (default: DATA's folder, NAME-run.json)
  --force          overwrite an existing run file
  -h, --help       this text

Examples:
  netbreeder init examples/data/kiln-firings.csv
  netbreeder init examples/data/glaze-crops --out glaze-run.json
`;

/** Class folders whose first image is looked at, for the size and colour guess. */
const IMAGES_LOOKED_AT = 12;

/** The run file `init` writes for DATA when no --out is given: NAME-run.json beside it. */
export function defaultRunFilePath(data: string): string {
  const name = basename(data, extname(data)) || 'data';
  return join(dirname(resolve(data)), `${name}-run.json`);
}

/** run-file.schema.json of this installation: the nearest one in the folders above this module, or null. */
function findRunFileSchema(): string | null {
  for (let dir = import.meta.dirname; ; dir = dirname(dir)) {
    const candidate = join(dir, RUN_FILE_SCHEMA_PATH);
    if (existsSync(candidate)) return candidate;
    if (dirname(dir) === dir) return null;
  }
}

const posixRelative = (from: string, to: string): string => relative(from, to).split(sep).join('/') || '.';
/** `to` as seen from `from`: relative when `to` is inside `within` (the repository, say) and `from` too, else absolute. */
const pathFrom = (from: string, to: string, within: string): string => (isInside(from, within) && isInside(to, within) ? posixRelative(from, to) : to);
const isInside = (path: string, folder: string): boolean => {
  const rel = relative(folder, path);
  return !rel.startsWith('..') && !isAbsolute(rel);
};

interface DatasetDraft {
  dataset: Parameters<typeof draftRunFile>[0]['dataset'];
  samples: number;
  inputsPerSample: number;
  lines: string[];
}

async function csvDraft(file: string, path: string, options: { label?: string; task?: 'classification' | 'regression' }): Promise<DatasetDraft> {
  const text = await readFile(file, 'utf8');
  const guess = guessCsvSource(profileCsv(text, file), options);
  const features = guess.columns.filter((c) => c.role === 'numeric' || c.role === 'categorical');
  return { dataset: csvSourceOf(path, guess), samples: guess.rows, inputsPerSample: Math.max(1, features.length), lines: describeCsvGuess(guess) };
}

function describeCsvGuess(guess: CsvGuess): string[] {
  const width = Math.min(24, Math.max(...guess.columns.map((c) => c.name.length)));
  const delimiter = guess.delimiter === '\t' ? 'tab' : `"${guess.delimiter}"`;
  return [
    `read ${guess.rows.toLocaleString('en-US')} rows × ${guess.columns.length} columns (delimiter ${delimiter})`,
    `label column: ${guess.labelColumn}, because ${guess.labelReason}`,
    `task: ${guess.task}, because ${guess.taskReason}`,
    'columns:',
    ...guess.columns.map((c) => `  ${c.name.padEnd(width)}  ${c.role.padEnd(11)}  ${c.reason}${c.missing && c.role !== 'ignored' ? `; ${c.missing} missing` : ''}`),
    ...(guess.missing === 'drop-row' ? ['missing: "drop-row": rows without a target are left out (a target is never filled), and so are rows with a missing feature'] : []),
  ];
}

async function imageDraft(folder: string, path: string): Promise<DatasetDraft> {
  const listing = await listImageFolder(folder);
  const firstOfClass = listing.classNames.map((_, c) => listing.files[listing.labels.indexOf(c)]!).slice(0, IMAGES_LOOKED_AT);
  const samples: ImageFolderFacts['samples'] = [];
  for (const file of firstOfClass) {
    const image = decodeImage(new Uint8Array(await readFile(file)), file);
    samples.push({ width: image.width, height: image.height, gray: looksGray(image.rgba) });
  }
  const classCounts = listing.classNames.map((name, c) => ({ name, count: listing.labels.filter((l) => l === c).length }));
  const settings = guessImageSettings({ classCounts, samples });
  const { width, height } = settings.imageSize.value;
  return {
    dataset: imageSourceOf(path, settings),
    samples: listing.files.length,
    inputsPerSample: width * height * settings.channels.value,
    lines: [
      `found ${listing.files.length.toLocaleString('en-US')} images in ${classCounts.length} class folders (${classCounts.slice(0, 6).map((c) => `${c.name} ${c.count}`).join(', ')}${classCounts.length > 6 ? ', …' : ''})${listing.skipped ? `; ${listing.skipped} other files skipped` : ''}`,
      'task: classification, because each sub-folder is a class',
      `image size: ${width}×${height}, because ${settings.imageSize.reason}`,
      `channels: ${settings.channels.value}, because ${settings.channels.reason}`,
    ],
  };
}

export async function initCommand(argv: string[], out: NodeJS.WritableStream = process.stdout): Promise<number> {
  const { values, positionals } = parseArgs({
    args: argv,
    allowPositionals: true,
    options: { label: { type: 'string' }, task: { type: 'string' }, out: { type: 'string' }, force: { type: 'boolean' }, help: { type: 'boolean', short: 'h' } },
  });
  if (values.help) return void out.write(INIT_HELP), 0;
  if (positionals.length !== 1) throw new NetbreederError('NB_BAD_USAGE', 'init needs exactly one CSV file or image folder: netbreeder init DATA (see netbreeder init --help)');
  const task = values.task;
  if (task !== undefined && task !== 'classification' && task !== 'regression') throw new NetbreederError('NB_BAD_USAGE', `--task must be classification or regression, got '${task}'`);
  const data = resolve(positionals[0]!);
  const info = await stat(data).catch((err: Error) => {
    throw new DatasetError('NB_DATASET_UNREADABLE', `cannot read ${positionals[0]}: ${err.message}; give a CSV file or a folder with one sub-folder of images per class`);
  });
  const target = resolve(values.out ?? defaultRunFilePath(data));
  // Checked first and again when writing ('wx'), so a file that appears meanwhile is kept too.
  if (!values.force && existsSync(target)) throw new NetbreederError('NB_BAD_USAGE', `${target} exists; init keeps it: pass --force to overwrite it, or --out FILE to write another`);
  const path = posixRelative(dirname(target), data);
  if (info.isDirectory() && (values.label !== undefined || task === 'regression')) throw new NetbreederError('NB_BAD_USAGE', '--label and --task regression are for CSV tables; an image folder\'s classes are its sub-folders');
  const draft = info.isDirectory() ? await imageDraft(data, path) : await csvDraft(data, path, { ...(values.label === undefined ? {} : { label: values.label }), ...(task ? { task } : {}) });

  const workers = defaultLocalWorkers();
  const budget = draftBudget(workers, draft.samples, draft.inputsPerSample);
  const schema = findRunFileSchema();
  const file = draftRunFile({ name: basename(data), schemaRef: schema && pathFrom(dirname(target), schema, dirname(schema)), dataset: draft.dataset, budget });
  const text = `${JSON.stringify(file, null, 2)}\n`;
  // The coordinator's own check of exactly this text: the schema, then the data read, split and encoded.
  const prepared = await prepareRun(runConfigFromText(text, target), createLogger('init', 'error'));
  await writeFile(target, text, { flag: values.force ? 'w' : 'wx' }).catch((err: NodeJS.ErrnoException) => {
    throw new NetbreederError('NB_BAD_USAGE', err.code === 'EEXIST' ? `${target} exists; init keeps it: pass --force to overwrite it` : `cannot write ${target}: ${err.message}`);
  });

  const shown = pathFrom(process.cwd(), target, process.cwd());
  const counts = prepared.loaded.preparation.classCounts;
  const sum = (a: number[]): number => a.reduce((s, n) => s + n, 0);
  out.write(
    [
      ...draft.lines,
      ...budget.reasons.map((r) => `budget: ${r}`),
      `checked as 'netbreeder run' will: ${sum(counts.train)} training, ${sum(counts.val)} validation and ${sum(counts.test)} test samples`,
      ...prepared.loaded.preparation.warnings.map((w) => `warning: ${w.message}`),
      ...(schema ? [] : [`note: ${RUN_FILE_SCHEMA_PATH} was not found beside this installation, so the run file names no $schema`]),
      `wrote ${shown}; change there what was guessed wrong, then: netbreeder run ${shown}`,
      '',
    ].join('\n'),
  );
  return 0;
}
