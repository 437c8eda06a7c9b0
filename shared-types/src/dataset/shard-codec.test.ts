import { describe, expect, it } from 'vitest';
import { decodeShard, encodeShard } from './shard-codec.js';

const split = (count: number, withTargets: boolean) => ({
  features: Float32Array.from({ length: count * 2 }, (_, i) => i / 4),
  labels: Int32Array.from({ length: count }, (_, i) => i % 2),
  count,
  ...(withTargets ? { targets: Float32Array.from({ length: count }, (_, i) => i - 1.5) } : {}),
});

describe('training shard', () => {
  it('round-trips a classification shard without targets', () => {
    const shard = { inputShape: [2], classNames: ['a', 'b'], train: split(3, false), val: split(2, false) };
    const back = decodeShard(encodeShard(shard));
    expect(back).toEqual(shard);
    expect(back.train.targets).toBeUndefined();
  });

  it('round-trips a regression shard with its standardised targets, and an empty second split', () => {
    const shard = { inputShape: [2], classNames: ['a', 'b'], train: split(4, true), val: split(0, true) };
    const back = decodeShard(encodeShard(shard));
    expect([...back.train.targets!]).toEqual([-1.5, -0.5, 0.5, 1.5]);
    expect(back.val.targets!.length).toBe(0);
    expect(back.train.features).toEqual(shard.train.features);
  });
});
