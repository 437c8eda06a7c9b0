import { readFile } from 'node:fs/promises';
import { isAbsolute, resolve } from 'node:path';
import { sampleSize, type DatasetSource, type PreparedDataset, type RunConfig } from '@netbreeder/shared-types';
import type { Logger } from '../logger.js';
import { DatasetError } from '../datasets/dataset-error.js';
import { datasetWarnings, splitClassCounts, type DatasetWarning } from '../datasets/dataset-report.js';
import { prepareDataset } from '../datasets/prepare-dataset.js';
import type { DatasetPreparation, DatasetPreprocessing } from '../datasets/preprocessing.js';
import { shapeSequences } from '../datasets/sequence-samples.js';
import { windowSeries } from '../datasets/series-windows.js';
import { checkShardSize } from '../datasets/shard-size.js';
import { selectSamples, stratifiedSplitIndices, type SplitIndices } from '../datasets/split.js';
import { encodeTable } from '../datasets/table-encoding.js';
import { parseCsvTable } from './csv-table.js';
import { parseSeriesCsv } from './series-csv.js';
import { parseSequencesCsv } from './sequences-csv.js';
import { decodeImageFolder, firstImageSize, listImageFolder } from './image-folder.js';
import { idxFeatures, pairIdx, readIdxFile } from './idx-files.js';

/** A dataset split, encoded and checked, with what was recorded about it. Nothing is stored yet. */
export interface LoadedDataset {
  dataset: PreparedDataset;
  preparation: DatasetPreparation;
}

/** The run settings {@link loadDataset} reads. */
export type DatasetRunSettings = Pick<RunConfig, 'dataset' | 'split' | 'seed' | 'maxDatasetMb'>;

export interface LoadDatasetOptions {
  /** Folder that relative paths of the source are resolved against. @default process.cwd() */
  baseDir?: string;
  /** Where class counts and warnings are logged. */
  log?: Logger;
}

/**
 * Reads a run's dataset source (demo tiles, a CSV table, an image folder, IDX files, a series
 * cut in windows or labelled sequences), splits it three ways stratified by class with
 * `split.seed` (the run's seed when absent; a series is split by time instead), and only then
 * fits and applies the encoding on the training split. Refuses a training shard above
 * `maxDatasetMb` before decoding anything large. Logs the class counts per split and the warnings
 * (tiny classes, imbalance, duplicates across splits, constant columns) and returns them. Throws a {@link DatasetError} naming the
 * file, line or field on bad input; it writes nothing, so a failed import leaves no trace.
 */
export async function loadDataset(settings: DatasetRunSettings, options: LoadDatasetOptions = {}): Promise<LoadedDataset> {
  const source = resolveSourcePaths(settings.dataset, options.baseDir ?? process.cwd());
  const { dataset, preprocessing, constantColumns, warnings: importWarnings = [] } = await importSource(source, settings);
  const classCounts = splitClassCounts(dataset);
  const warnings = [...importWarnings, ...datasetWarnings(dataset, classCounts, constantColumns)];
  options.log?.info(
    { classes: dataset.classNames, inputShape: dataset.inputShape, train: classCounts.train, val: classCounts.val, test: classCounts.test },
    'dataset prepared: samples per class in each split',
  );
  for (const w of warnings) options.log?.warn({ code: w.code }, `dataset warning: ${w.message}`);
  return { dataset, preparation: { preprocessing, classCounts, warnings } };
}

/** The source with every file path made absolute against `baseDir` (absolute paths stay as they are). */
export function resolveSourcePaths(source: DatasetSource, baseDir: string): DatasetSource {
  const at = (p: string): string => (isAbsolute(p) ? p : resolve(baseDir, p));
  switch (source.kind) {
    case 'demo-tiles':
      return source;
    case 'csv':
    case 'image-folder':
      return { ...source, path: at(source.path) };
    case 'idx':
      return { ...source, images: at(source.images), labels: at(source.labels) };
    case 'series-windows':
    case 'sequences':
      return { ...source, path: at(source.path) };
  }
}

interface Imported {
  dataset: PreparedDataset;
  preprocessing: DatasetPreprocessing;
  constantColumns: string[];
  /** Warnings of the import itself (sequences cut to length). */
  warnings?: DatasetWarning[];
}

async function importSource(source: DatasetSource, settings: DatasetRunSettings): Promise<Imported> {
  const { split: fractions, maxDatasetMb } = settings;
  const seed = fractions.seed ?? settings.seed;
  switch (source.kind) {
    case 'demo-tiles': {
      const dataset = prepareDataset(source, fractions, seed);
      checkShardSize(dataset.train.count + dataset.val.count, sampleSize(dataset.inputShape), maxDatasetMb, 'demo tiles');
      return { dataset, preprocessing: { kind: 'demo-tiles', inputShape: dataset.inputShape }, constantColumns: [] };
    }
    case 'csv': {
      let text = await readCsvText(source.path);
      const table = parseCsvTable(text, source.path, source);
      text = '';
      checkClasses(table.classNames, `${source.path}: label column "${source.labelColumn}"`, source.path);
      const encoded = encodeTable(table, { fractions, seed, standardize: source.standardize, maxDatasetMb, missing: source.missing, missingValues: source.missingValues });
      const { target } = encoded.dataset;
      const dataset = target && source.regressionLoss === 'huber' ? { ...encoded.dataset, target: { ...target, loss: 'huber' as const } } : encoded.dataset;
      return { dataset, preprocessing: encoded.preprocessing, constantColumns: encoded.constantColumns };
    }
    case 'image-folder': {
      const listing = await listImageFolder(source.path);
      checkClasses(listing.classNames, `${source.path}: class sub-folders`, source.path);
      const split = stratifiedSplitIndices(listing.labels, listing.classNames, fractions, seed);
      const size = source.imageSize ?? (await firstImageSize(listing));
      const target = { width: size.width, height: size.height, channels: source.channels, method: source.resize };
      checkShardSize(split.train.length + split.val.length, size.width * size.height * source.channels, maxDatasetMb, source.path);
      const features = await decodeImageFolder(listing, target, !source.imageSize);
      const all = { features, labels: listing.labels, count: listing.files.length };
      return {
        dataset: splitSamples(all, split, [size.height, size.width, source.channels], listing.classNames),
        preprocessing: {
          kind: 'images',
          folder: source.path,
          width: size.width,
          height: size.height,
          channels: source.channels,
          resize: source.imageSize ? source.resize : 'none',
          scale: 'divide-255',
          skippedFiles: listing.skipped,
        },
        constantColumns: [],
      };
    }
    case 'idx': {
      const files = { images: source.images, labels: source.labels };
      const pair = pairIdx(await readIdxFile(source.images), await readIdxFile(source.labels), files, source.classNames);
      checkClasses(pair.classNames, `${source.labels}: labels`, source.labels);
      const split = stratifiedSplitIndices(pair.labels, pair.classNames, fractions, seed);
      checkShardSize(split.train.length + split.val.length, sampleSize(pair.inputShape), maxDatasetMb, source.images);
      const all = { features: idxFeatures(pair.samples, source.scaleBytes), labels: pair.labels, count: pair.labels.length };
      return {
        dataset: splitSamples(all, split, pair.inputShape, pair.classNames),
        preprocessing: {
          kind: 'idx',
          images: source.images,
          labels: source.labels,
          typeCode: pair.samples.typeCode,
          inputShape: pair.inputShape,
          scale: source.scaleBytes && pair.samples.typeCode === 0x08 ? 'divide-255' : 'none',
          labelValues: pair.labelValues,
        },
        constantColumns: [],
      };
    }
    case 'series-windows': {
      const series = parseSeriesCsv(await readCsvText(source.path), source.path, { delimiter: source.delimiter, channels: source.channels, target: { column: source.labelColumn, task: source.task } });
      const { dataset, preprocessing } = windowSeries(series, source, fractions);
      if (source.task !== 'regression') checkClasses(dataset.classNames, `${source.path}: label column "${source.labelColumn}" at the windows' last steps`, source.path);
      checkShardSize(dataset.train.count + dataset.val.count, sampleSize(dataset.inputShape), maxDatasetMb, source.path);
      const withLoss = dataset.target && source.regressionLoss === 'huber' ? { ...dataset, target: { ...dataset.target, loss: 'huber' as const } } : dataset;
      return { dataset: withLoss, preprocessing, constantColumns: [] };
    }
    case 'sequences': {
      const samples = parseSequencesCsv(await readCsvText(source.path), source.path, source);
      const shaped = shapeSequences(samples, source, fractions, seed);
      checkShardSize(shaped.dataset.train.count + shaped.dataset.val.count, sampleSize(shaped.dataset.inputShape), maxDatasetMb, source.path);
      return { dataset: shaped.dataset, preprocessing: shaped.preprocessing, constantColumns: [], warnings: shaped.warnings };
    }
  }
}

async function readCsvText(path: string): Promise<string> {
  try {
    return await readFile(path, 'utf8');
  } catch (err) {
    throw new DatasetError('NB_DATASET_UNREADABLE', `cannot read CSV file ${path}: ${(err as Error).message}; check dataset.path (relative to the run file's folder)`, { file: path });
  }
}

function splitSamples(all: { features: Float32Array; labels: Int32Array; count: number }, split: SplitIndices, inputShape: number[], classNames: string[]): PreparedDataset {
  const size = sampleSize(inputShape);
  return {
    inputShape,
    classNames,
    train: selectSamples(all, split.train, size),
    val: selectSamples(all, split.val, size),
    test: selectSamples(all, split.test, size),
  };
}

/** A single class is named with the file it came from (the split would only say "1 class"). */
function checkClasses(classNames: string[], what: string, file: string): void {
  if (classNames.length < 2) {
    throw new DatasetError(
      'NB_DATASET_TOO_FEW_CLASSES',
      `${what} hold${classNames.length === 1 ? `s a single class ("${classNames[0]}")` : ' no class'}; a classifier needs at least 2 classes`,
      { file },
    );
  }
}
