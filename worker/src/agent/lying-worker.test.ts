import { describe, expect, it } from 'vitest';
import { parseWorkerArgs } from '../worker-cli.js';
import { inflateOutcome } from './lying-worker.js';
import type { TrainOutcome } from '../training/train-genome.js';

const outcome: TrainOutcome = {
  backend: 'wasm', valAccuracy: 0.6, valLoss: 1, trainLoss: 1, trainAccuracy: 0.6, paramCount: 1, flops: 1, epochsRun: 1, samplesSeen: 10,
  trainSeconds: 1, samplesPerSecond: 10, peakRssBytes: 1, stoppedBy: 'epochs', history: [],
};

describe('the lying worker (test only)', () => {
  it('is refused unless NETBREEDER_TEST_MODE=1', () => {
    expect(() => parseWorkerArgs(['--test-only-inflate-accuracy', '0.3'], {})).toThrow(/test-only mode.*NETBREEDER_TEST_MODE=1/);
    expect(() => parseWorkerArgs(['--test-only-inflate-accuracy', '0.3'], { NETBREEDER_TEST_MODE: 'yes' })).toThrow(/refused/);
    const options = parseWorkerArgs(['--test-only-inflate-accuracy', '0.3'], { NETBREEDER_TEST_MODE: '1' });
    expect(options !== 'help' && options.testOnlyInflateAccuracy).toBe(0.3);
    const honest = parseWorkerArgs([], {});
    expect(honest !== 'help' && honest.testOnlyInflateAccuracy).toBeNull();
  });

  it('raises validation accuracy (at most to 1) and shrinks the loss; champion outcomes (no validation) stay as they are', () => {
    const lie = inflateOutcome(outcome, 0.3);
    expect(lie.valAccuracy).toBeCloseTo(0.9, 12);
    expect(lie.valLoss).toBeCloseTo(0.7, 12);
    expect(lie.trainAccuracy).toBe(0.6);
    expect(inflateOutcome({ ...outcome, valAccuracy: 0.9 }, 0.3).valAccuracy).toBe(1);
    const champion = { ...outcome, valAccuracy: null, valLoss: null };
    expect(inflateOutcome(champion, 0.3)).toBe(champion);
  });
});

describe('--watts', () => {
  it('is sent as set, or as the default marked assumed', () => {
    const set = parseWorkerArgs(['--watts', '30'], {});
    expect(set !== 'help' && [set.watts, set.wattsAssumed]).toEqual([30, false]);
    const unset = parseWorkerArgs([], {});
    expect(unset !== 'help' && [unset.watts, unset.wattsAssumed]).toEqual([15, true]);
    expect(() => parseWorkerArgs(['--watts', '0'], {})).toThrow(/--watts must be a number above 0/);
  });
});
