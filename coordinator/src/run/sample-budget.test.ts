import { describe, expect, it } from 'vitest';
import { newSamples } from './sample-budget.js';

const start = (kind: 'fresh' | 'resumed' | 'own-checkpoint' | 'parent-weights', fromEpoch: number) => ({ kind, fromEpoch, checkpointSha256: null, fromEvaluationId: null, copiedWeights: 0, totalWeights: 0, note: null });

describe('newSamples', () => {
  it('counts what a job trained itself: a continued training counts only the epochs it added', () => {
    expect(newSamples({ samplesSeen: 900 }, 300)).toBe(900);
    expect(newSamples({ samplesSeen: 900, start: start('fresh', 0) }, 300)).toBe(900);
    expect(newSamples({ samplesSeen: 900, start: start('own-checkpoint', 1) }, 300)).toBe(600);
    expect(newSamples({ samplesSeen: 900, start: start('resumed', 2) }, 300)).toBe(300);
    // a child starting from its parent's weights trains all its epochs itself
    expect(newSamples({ samplesSeen: 900, start: start('parent-weights', 0) }, 300)).toBe(900);
  });
});
