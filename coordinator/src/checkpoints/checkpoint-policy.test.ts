import { describe, expect, it } from 'vitest';
import { storeWithRun, fixtureHash, searchJob } from '../store/test-fixtures.js';
import { searchWeights } from './checkpoint-policy.js';

/** Where a final training of the champion phase starts (`champion.warmStart`). */
describe('searchWeights', () => {
  const setup = (config: Record<string, unknown>, final: boolean) => {
    const store = storeWithRun(config);
    store.addEvaluation(searchJob('r1-s3-a1', { budget: { epochs: 9, maxSeconds: 60 } }), 3, 1000, false);
    store.recordCheckpoint({ runId: 'r1', seq: 3, evaluationId: 'r1-s3-a1', genomeHash: fixtureHash, sha256: 'b'.repeat(64), epoch: 9, final, bytes: 10, path: '/nowhere', createdAt: 1000 });
    return store;
  };

  it("names the search training's final checkpoint, to copy every weight from", () => {
    const store = setup({}, true);
    expect(searchWeights(store, store.getRun('r1')!.config, 'r1', 3)).toEqual({
      kind: 'parent-weights',
      checkpoint: { sha256: 'b'.repeat(64), bytes: 10, epoch: 9, evaluationId: 'r1-s3-a1' },
    });
  });

  it('gives nothing when the run turned it off, when only a mid-training checkpoint is held, or when none is', () => {
    const off = setup({ champion: { warmStart: false } }, true);
    expect(searchWeights(off, off.getRun('r1')!.config, 'r1', 3)).toBeUndefined();
    const midway = setup({}, false);
    expect(searchWeights(midway, midway.getRun('r1')!.config, 'r1', 3)).toBeUndefined();
    expect(searchWeights(midway, midway.getRun('r1')!.config, 'r1', 4)).toBeUndefined();
  });
});
