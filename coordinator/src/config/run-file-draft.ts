import { DEFAULT_MISSING_VALUE_TOKENS, type CsvSource, type ImageFolderSource } from '@netbreeder/shared-types';
import type { CsvGuess } from './csv-guess.js';
import { DatasetError } from '../datasets/dataset-error.js';

/** A setting the draft chose and the sentence that says why. */
export interface Reasoned<T> {
  value: T;
  reason: string;
}

/** Images whose longer side is at most this are kept at their size. */
const KEEP_SIDE = 64;
/** Larger images are shrunk so their longer side is this (small CPU networks; common practice). */
const SHRINK_SIDE = 32;

/** What the draft knows of an image folder: the class counts and the first images' sizes and colours. */
export interface ImageFolderFacts {
  classCounts: Array<{ name: string; count: number }>;
  /** Some of the images (the first of each class), decoded. */
  samples: Array<{ width: number; height: number; gray: boolean }>;
}

/** True when every pixel of RGBA bytes has equal red, green and blue (within 2 levels). */
export function looksGray(rgba: Uint8Array): boolean {
  for (let i = 0; i < rgba.length; i += 4) {
    const r = rgba[i]!;
    if (Math.abs(r - rgba[i + 1]!) > 2 || Math.abs(r - rgba[i + 2]!) > 2) return false;
  }
  return true;
}

/** The image-folder settings for a folder: the size every image is resized to and the channels, with reasons. */
export function guessImageSettings(facts: ImageFolderFacts): { imageSize: Reasoned<{ width: number; height: number }>; channels: Reasoned<1 | 3> } {
  const first = facts.samples[0];
  if (!first) throw new DatasetError('NB_DATASET_EMPTY', 'no image could be looked at');
  const sizes = new Set(facts.samples.map((s) => `${s.width}×${s.height}`));
  const mixed = sizes.size > 1 ? ` (the images looked at differ: ${[...sizes].slice(0, 4).join(', ')}; every image is resized to it)` : '';
  const longer = Math.max(first.width, first.height);
  const imageSize =
    longer <= KEEP_SIDE
      ? { value: { width: first.width, height: first.height }, reason: `the first image's size (images up to ${KEEP_SIDE} pixels a side are kept as they are)${mixed}` }
      : {
          value: { width: Math.max(1, Math.round((first.width * SHRINK_SIDE) / longer)), height: Math.max(1, Math.round((first.height * SHRINK_SIDE) / longer)) },
          reason: `the first image (${first.width}×${first.height}) shrunk to a longer side of ${SHRINK_SIDE} pixels: small networks train on a CPU in reasonable time at that size (common practice)${mixed}`,
        };
  const colour = facts.samples.filter((s) => !s.gray).length;
  const channels: Reasoned<1 | 3> = colour
    ? { value: 3, reason: `${colour} of the ${facts.samples.length} images looked at have colour` }
    : { value: 1, reason: `the ${facts.samples.length} images looked at are all gray` };
  return { imageSize, channels };
}

/** The budget settings of a draft. */
export interface BudgetDraft {
  budget: { maxEvaluations: number; maxMinutes: number };
  evaluation: { maxSeconds: number };
  search: { populationSize: number; sampleSize: number };
  reasons: string[];
}

/**
 * Budgets for a first run on this machine: `workers` local workers (one per core), `samples` rows
 * or images of `inputsPerSample` numbers each. Rules of thumb, not measurements: about 30
 * evaluations per worker, half an hour, a longer cap per training for larger data, and a population
 * about a fifth of the evaluations so evolution has several generations to work with.
 */
export function draftBudget(workers: number, samples: number, inputsPerSample: number): BudgetDraft {
  const maxEvaluations = Math.min(400, Math.max(60, 30 * workers));
  const work = samples * inputsPerSample;
  const maxSeconds = work <= 1e6 ? 60 : work <= 1e7 ? 120 : 300;
  const populationSize = Math.min(20, Math.max(8, Math.round(maxEvaluations / 5)));
  const sampleSize = Math.max(3, Math.round(populationSize / 4));
  return {
    budget: { maxEvaluations, maxMinutes: 30 },
    evaluation: { maxSeconds },
    search: { populationSize, sampleSize },
    reasons: [
      `${maxEvaluations} evaluations in at most 30 minutes: about 30 per worker for ${workers} local worker(s), one per core (rule of thumb; raise both for a night on several PCs)`,
      `${maxSeconds} s per training: ${samples.toLocaleString('en-US')} samples × ${inputsPerSample.toLocaleString('en-US')} inputs (rule of thumb)`,
      `population ${populationSize}, tournaments of ${sampleSize}: several generations within the evaluations (rule of thumb)`,
    ],
  };
}

/** A CSV source as a run file writes it: settings at their default may be left out. */
export type CsvSourceDraft = Pick<CsvSource, 'kind' | 'path' | 'labelColumn'> & Partial<CsvSource>;

/** The dataset part of a run file for a CSV guess: every guessed setting written out, the missing-value marks only when the guess adds some. */
export function csvSourceOf(path: string, guess: CsvGuess): CsvSourceDraft {
  return {
    kind: 'csv',
    path,
    labelColumn: guess.labelColumn,
    task: guess.task,
    delimiter: guess.delimiter,
    ignoreColumns: guess.columns.filter((c) => c.role === 'ignored').map((c) => c.name),
    categoricalColumns: guess.columns.filter((c) => c.role === 'categorical').map((c) => c.name),
    ...(guess.extraMissingValues.length ? { missingValues: [...DEFAULT_MISSING_VALUE_TOKENS, ...guess.extraMissingValues] } : {}),
    missing: guess.missing,
  };
}

/** The dataset part of a run file for an image folder. */
export function imageSourceOf(path: string, settings: ReturnType<typeof guessImageSettings>): ImageFolderSource {
  return { kind: 'image-folder', path, imageSize: settings.imageSize.value, resize: 'area', channels: settings.channels.value };
}

/** A whole run file: its schema reference (when known), name, dataset, search and budgets. */
export function draftRunFile(input: { name: string; schemaRef: string | null; dataset: CsvSourceDraft | ImageFolderSource; budget: BudgetDraft }): Record<string, unknown> {
  return {
    ...(input.schemaRef ? { $schema: input.schemaRef } : {}),
    name: input.name.slice(0, 120) || 'run',
    seed: 1,
    dataset: input.dataset,
    search: { algorithm: 'asha-evolution', ...input.budget.search },
    budget: input.budget.budget,
    evaluation: input.budget.evaluation,
  };
}
