import type { LabelledSamples, PreparedDataset, SequencesSource } from '@netbreeder/shared-types';
import type { DatasetWarning } from './dataset-report.js';
import { DatasetError } from './dataset-error.js';
import type { SequencesPreprocessing } from './preprocessing.js';
import { stratifiedSplitIndices, type SplitFractions } from './split.js';

/** One labelled sequence as read: `steps` time steps of the channels, interleaved per step, in time order. */
export interface RawSequence {
  id: string;
  /** The file line of its first row. */
  line: number;
  /** Its class; absent for new data. */
  label?: string;
  values: Float64Array;
  steps: number;
}

type Channel = { name: string; mean: number; std: number };

/** Mean and population std of each channel over every real step of the samples at `indices` (std 1 when constant). */
export function fitSequenceChannels(samples: readonly RawSequence[], indices: Int32Array, names: readonly string[]): Channel[] {
  const width = names.length;
  const sum = new Float64Array(width);
  const squares = new Float64Array(width);
  let steps = 0;
  for (const i of indices) {
    const s = samples[i]!;
    steps += s.steps;
    for (let k = 0; k < s.values.length; k++) sum[k % width]! += s.values[k]!;
  }
  const mean = Array.from(sum, (v) => v / steps);
  for (const i of indices) {
    const s = samples[i]!;
    for (let k = 0; k < s.values.length; k++) squares[k % width]! += (s.values[k]! - mean[k % width]!) ** 2;
  }
  return names.map((name, c) => {
    const std = Math.sqrt(squares[c]! / steps);
    return { name, mean: mean[c]!, std: std > 0 ? std : 1 };
  });
}

/** The samples at `indices`, standardised, cut to their first `length` steps or padded at the end with 0, as [length, channels] each. */
export function sequenceFeatures(samples: readonly RawSequence[], indices: ArrayLike<number>, channels: readonly Channel[], length: number): Float32Array {
  const width = channels.length;
  const out = new Float32Array(indices.length * length * width);
  for (let n = 0; n < indices.length; n++) {
    const s = samples[indices[n]!]!;
    const steps = Math.min(length, s.steps);
    for (let k = 0; k < steps * width; k++) out[n * length * width + k] = (s.values[k]! - channels[k % width]!.mean) / channels[k % width]!.std;
  }
  return out;
}

export type SequenceSettings = Pick<SequencesSource, 'path' | 'idColumn' | 'timeColumn' | 'channels' | 'labelColumn' | 'length'>;

/**
 * Labelled sequences split three ways stratified by class (whole samples), channels fitted on the
 * training samples, every sample brought to one length: the run file's, or the training split's
 * longest. A warning names how many samples were cut. Pure.
 */
export function shapeSequences(
  samples: readonly RawSequence[],
  s: SequenceSettings,
  fractions: SplitFractions,
  seed: number | string,
): { dataset: PreparedDataset; preprocessing: SequencesPreprocessing; warnings: DatasetWarning[] } {
  const classNames = [...new Set(samples.map((x) => x.label!))].sort(new Intl.Collator('en', { numeric: true }).compare);
  const classIndex = new Map(classNames.map((name, i) => [name, i]));
  const labels = Int32Array.from(samples, (x) => classIndex.get(x.label!)!);
  const split = stratifiedSplitIndices(labels, classNames, fractions, seed);
  const channels = fitSequenceChannels(samples, split.train, s.channels);
  const length = s.length ?? Math.max(...Array.from(split.train, (i) => samples[i]!.steps));
  if (!(length > 0)) throw new DatasetError('NB_DATASET_EMPTY', `${s.path}: the training samples have no steps`, { file: s.path });
  const part = (indices: Int32Array): LabelledSamples => ({ features: sequenceFeatures(samples, indices, channels, length), labels: Int32Array.from(indices, (i) => labels[i]!), count: indices.length });
  const cut = samples.filter((x) => x.steps > length).length;
  const padded = samples.filter((x) => x.steps < length).length;
  const warnings: DatasetWarning[] = cut
    ? [
        {
          code: 'sequences-cut',
          message: `${cut} of ${samples.length} samples are longer than ${length} steps (${s.length ? 'the run file\'s length' : 'the longest training sample'}) and were cut to their first ${length} steps; set dataset.length to keep more`,
        },
      ]
    : [];
  return {
    dataset: { inputShape: [length, channels.length], classNames, train: part(split.train), val: part(split.val), test: part(split.test) },
    preprocessing: {
      kind: 'sequences',
      file: s.path,
      idColumn: s.idColumn,
      timeColumn: s.timeColumn,
      channels,
      length,
      lengthFrom: s.length ? 'run-file' : 'training-longest',
      cut,
      padded,
    },
    warnings,
  };
}
