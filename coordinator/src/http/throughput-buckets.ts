import type { ThroughputBucket } from '@netbreeder/shared-types';

/** One done evaluation, as throughput sees it. */
export interface TrainingSpan {
  /** When its result was recorded, ms since the epoch. */
  finishedAt: number;
  /** How long it trained, seconds. */
  trainSeconds: number;
  /** Its training speed, samples per second. */
  samplesPerSecond: number;
}

/** Bucket widths the dashboard uses, seconds: the smallest that keeps a run within `maxBuckets`. */
const NICE_SECONDS = [10, 15, 30, 60, 120, 300, 600, 900, 1800, 3600, 7200, 14400, 28800, 86400];

/** The smallest width from a fixed ladder (10 s … 1 day) that covers `durationMs` in at most `maxBuckets` buckets. */
export function chooseBucketSeconds(durationMs: number, maxBuckets = 120): number {
  for (const s of NICE_SECONDS) if (durationMs <= s * 1000 * maxBuckets) return s;
  return Math.ceil(durationMs / 1000 / maxBuckets);
}

/**
 * Throughput over time from finished evaluations alone (so it survives a restart): each bucket
 * counts the evaluations that finished in it, and the training samples of every evaluation
 * (speed × training time) are spread evenly over the span it trained, `[finishedAt - trainSeconds,
 * finishedAt]`, so `samplesPerSecond` is the speed summed over all workers training at the time.
 * Buckets run from `from` (floored to the width) to `to`; empty buckets are kept, as zeros.
 */
export function throughputBuckets(spans: readonly TrainingSpan[], opts: { from: number; to: number; bucketSeconds: number }): ThroughputBucket[] {
  const width = opts.bucketSeconds * 1000;
  const first = Math.floor(opts.from / width) * width;
  const count = Math.max(1, Math.ceil((Math.max(opts.to, opts.from + 1) - first) / width));
  const buckets: ThroughputBucket[] = Array.from({ length: count }, (_, i) => ({ start: first + i * width, evaluations: 0, evaluationsPerMinute: 0, samplesPerSecond: 0 }));
  const samples = new Array<number>(count).fill(0);
  const indexOf = (t: number) => Math.floor((t - first) / width);
  for (const span of spans) {
    const end = span.finishedAt;
    const i = indexOf(end);
    if (i >= 0 && i < count) buckets[i]!.evaluations += 1;
    const trainMs = Math.max(0, span.trainSeconds * 1000);
    const total = span.samplesPerSecond * span.trainSeconds;
    if (!(total > 0)) continue;
    if (trainMs === 0) {
      if (i >= 0 && i < count) samples[i]! += total;
      continue;
    }
    const start = end - trainMs;
    for (let k = Math.max(0, indexOf(start)); k <= Math.min(count - 1, indexOf(end)); k++) {
      const lo = Math.max(start, first + k * width);
      const hi = Math.min(end, first + (k + 1) * width);
      if (hi > lo) samples[k]! += (total * (hi - lo)) / trainMs;
    }
  }
  for (let k = 0; k < count; k++) {
    const b = buckets[k]!;
    b.evaluationsPerMinute = b.evaluations / (opts.bucketSeconds / 60);
    b.samplesPerSecond = samples[k]! / opts.bucketSeconds;
  }
  return buckets;
}
