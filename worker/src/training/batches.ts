import type { LabelledSamples, Random } from '@netbreeder/shared-types';
import { ShardMismatchError } from './errors.js';

/** Shuffles `order` in place with the Fisher-Yates method, drawing from our seeded source. */
export function shuffleInPlace(order: Int32Array, random: Random): Int32Array {
  for (let i = order.length - 1; i > 0; i--) {
    const j = Math.floor(random.next() * (i + 1));
    const t = order[i]!;
    order[i] = order[j]!;
    order[j] = t;
  }
  return order;
}

/** 0, 1, …, count − 1. */
export const identityOrder = (count: number): Int32Array => Int32Array.from({ length: count }, (_, i) => i);

/** One batch copied out of a split: features row-major, one-hot targets, class indices (and regression targets). */
export interface Batch {
  size: number;
  features: Float32Array;
  oneHot: Float32Array;
  labels: Int32Array;
  /** The standardised regression target of each sample; empty for a classification split. */
  targets: Float32Array;
}

/**
 * Copies the samples `order[start .. start + size)` into reusable buffers (allocated once for the
 * largest batch), so building a batch allocates nothing.
 */
export class BatchAssembler {
  private readonly features: Float32Array;
  private readonly oneHot: Float32Array;
  private readonly labels: Int32Array;
  private readonly targets: Float32Array;

  constructor(
    private readonly samples: LabelledSamples,
    private readonly sampleLength: number,
    private readonly numClasses: number,
    maxBatch: number,
  ) {
    this.features = new Float32Array(maxBatch * sampleLength);
    this.oneHot = new Float32Array(maxBatch * numClasses);
    this.labels = new Int32Array(maxBatch);
    this.targets = new Float32Array(samples.targets ? maxBatch : 0);
  }

  batch(order: Int32Array, start: number, size: number): Batch {
    const { sampleLength: len, numClasses } = this;
    this.oneHot.fill(0, 0, size * numClasses);
    for (let b = 0; b < size; b++) {
      const i = order[start + b]!;
      this.features.set(this.samples.features.subarray(i * len, (i + 1) * len), b * len);
      const label = this.samples.labels[i]!;
      this.labels[b] = label;
      this.oneHot[b * numClasses + label] = 1;
      if (this.samples.targets) this.targets[b] = this.samples.targets[i]!;
    }
    return {
      size,
      features: this.features.subarray(0, size * len),
      oneHot: this.oneHot.subarray(0, size * numClasses),
      labels: this.labels.subarray(0, size),
      targets: this.targets.subarray(0, this.samples.targets ? size : 0),
    };
  }
}

/** Checks that a split is consistent with the data shape; throws an error saying what to fix. */
export function checkSamples(samples: LabelledSamples, sampleLength: number, numClasses: number, splitName: string, regression = false): void {
  if (regression && samples.targets?.length !== samples.count) {
    throw new ShardMismatchError(`${splitName} split has ${samples.targets?.length ?? 'no'} regression targets for ${samples.count} samples; the shard is not a regression shard, re-export the dataset`);
  }
  if (samples.features.length !== samples.count * sampleLength) {
    throw new ShardMismatchError(`${splitName} split has ${samples.features.length} feature values for ${samples.count} samples of ${sampleLength}; re-export the dataset`);
  }
  if (samples.labels.length !== samples.count) throw new ShardMismatchError(`${splitName} split has ${samples.labels.length} labels for ${samples.count} samples; re-export the dataset`);
  for (let i = 0; i < samples.count; i++) {
    const l = samples.labels[i]!;
    if (!(l >= 0 && l < numClasses)) throw new ShardMismatchError(`${splitName} sample ${i} has label ${l}, outside 0..${numClasses - 1}; check the class list`);
  }
}
