import { describe, expect, it } from 'vitest';
import { chooseBucketSeconds, throughputBuckets } from './throughput-buckets.js';

describe('throughputBuckets', () => {
  it('counts each evaluation in the bucket it finished in, and keeps empty buckets', () => {
    const t0 = 1_000_000_000_000; // a multiple of 10 s
    const b = throughputBuckets(
      [
        { finishedAt: t0 + 1_000, trainSeconds: 0, samplesPerSecond: 0 },
        { finishedAt: t0 + 9_999, trainSeconds: 0, samplesPerSecond: 0 },
        { finishedAt: t0 + 25_000, trainSeconds: 0, samplesPerSecond: 0 },
      ],
      { from: t0, to: t0 + 30_000, bucketSeconds: 10 },
    );
    expect(b.map((x) => x.start - t0)).toEqual([0, 10_000, 20_000]);
    expect(b.map((x) => x.evaluations)).toEqual([2, 0, 1]);
    expect(b[0]!.evaluationsPerMinute).toBe(12); // 2 in 10 s
  });

  it('spreads training samples over the time trained, so two workers at once add up', () => {
    const t0 = 2_000_000_000_000;
    // two workers, each 100 samples/s, both training for the whole 20 s window
    const spans = [
      { finishedAt: t0 + 20_000, trainSeconds: 20, samplesPerSecond: 100 },
      { finishedAt: t0 + 20_000, trainSeconds: 20, samplesPerSecond: 100 },
    ];
    const b = throughputBuckets(spans, { from: t0, to: t0 + 20_000, bucketSeconds: 10 });
    expect(b.map((x) => x.samplesPerSecond)).toEqual([200, 200]);
    // the samples are conserved whatever the width: 2 × 100 × 20
    const wide = throughputBuckets(spans, { from: t0, to: t0 + 20_000, bucketSeconds: 60 });
    expect(wide.reduce((s, x) => s + x.samplesPerSecond * 60, 0)).toBeCloseTo(4000, 6);
  });

  it('ignores time outside the window without losing the part inside', () => {
    const t0 = 3_000_000_000_000;
    const b = throughputBuckets([{ finishedAt: t0 + 5_000, trainSeconds: 10, samplesPerSecond: 50 }], { from: t0, to: t0 + 10_000, bucketSeconds: 10 });
    expect(b).toHaveLength(1);
    expect(b[0]!.samplesPerSecond).toBeCloseTo((50 * 5) / 10, 9); // half of the 10 s training was inside
  });
});

describe('chooseBucketSeconds', () => {
  it('picks the smallest width that keeps the run within the bucket count', () => {
    expect(chooseBucketSeconds(60_000)).toBe(10);
    expect(chooseBucketSeconds(10 * 120_000 + 1)).toBe(15);
    expect(chooseBucketSeconds(8 * 3600_000)).toBe(300);
    expect(chooseBucketSeconds(10 * 86_400_000 * 120)).toBe(864_000);
  });
});
