import { DatasetError } from './dataset-error.js';

/** Bytes a training shard of `count` samples of `valuesPerSample` float32 values takes (plus int32 labels), header aside. */
export const shardBytes = (count: number, valuesPerSample: number): number => count * (valuesPerSample + 1) * 4;

/**
 * Refuses, before anything is encoded or stored, a training shard (train + validation) larger
 * than `maxMb` MiB: workers decode it whole, so it has to fit in their memory cap.
 */
export function checkShardSize(trainAndVal: number, valuesPerSample: number, maxMb: number, what: string): void {
  const bytes = shardBytes(trainAndVal, valuesPerSample);
  if (bytes > maxMb * 2 ** 20) {
    throw new DatasetError(
      'NB_DATASET_TOO_LARGE',
      `${what}: the training shard would hold ${trainAndVal} samples × ${valuesPerSample} values = ${(bytes / 2 ** 20).toFixed(1)} MiB ` +
        `of float32, above the run's maxDatasetMb of ${maxMb} MiB (workers decode the whole shard in memory, so it must also fit under ` +
        'their --memory-cap); use fewer or smaller samples, or raise maxDatasetMb if every worker has the memory',
      { file: what, field: 'maxDatasetMb' },
    );
  }
}
