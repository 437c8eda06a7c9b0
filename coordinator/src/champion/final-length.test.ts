import { describe, expect, it } from 'vitest';
import type { EpochRecord } from '@netbreeder/shared-types';
import { finalTrainingLength } from './final-length.js';

const curve = (val: Array<number | null>): EpochRecord[] => val.map((v, i) => ({ epoch: i + 1, trainLoss: 1, trainAccuracy: 0.5, valLoss: v === null ? null : 1 - v, valAccuracy: v, seconds: 1 }));

describe('finalTrainingLength', () => {
  it('takes the epoch of the best validation accuracy (the earliest among equals)', () => {
    expect(finalTrainingLength(undefined, curve([0.5, 0.7, 0.8, 0.8, 0.75]), 5)).toMatchObject({ epochs: 3, rule: 'learning-curve' });
    expect(finalTrainingLength(undefined, curve([0.9, 0.7]), 2)).toMatchObject({ epochs: 1, rule: 'learning-curve' });
  });

  it('takes the whole final budget when the curve reached its best in its last quarter, and only then', () => {
    expect(finalTrainingLength(undefined, curve([0.5, 0.7, 0.8]), 3, 14)).toMatchObject({ epochs: 14, rule: 'still-rising' });
    expect(finalTrainingLength(undefined, curve([0.5, 0.6, 0.7, 0.8, 0.9, 0.95, 0.97, 0.99, 0.98]), 9, 14)).toMatchObject({ epochs: 14, rule: 'still-rising' });
    expect(finalTrainingLength(undefined, curve([0.5, 0.8, 0.7]), 3, 14)).toMatchObject({ epochs: 2, rule: 'learning-curve' });
    expect(finalTrainingLength(undefined, curve([0.5, 0.9, 0.8, 0.8, 0.8, 0.8]), 6, 14)).toMatchObject({ epochs: 2, rule: 'learning-curve' });
    expect(finalTrainingLength(undefined, curve([0.5, 0.7, 0.8]), 3)).toMatchObject({ epochs: 3, rule: 'learning-curve' });
    // A budget shorter than the curve never shortens it.
    expect(finalTrainingLength(undefined, curve([0.5, 0.7, 0.8]), 3, 2)).toMatchObject({ epochs: 3, rule: 'learning-curve' });
  });

  it('takes the whole final budget when the last epoch is within the noise of the best (two standard errors over the validation samples), and not beyond it', () => {
    // 1,200 validation samples at 96.25%: 2·sqrt(0.9625·0.0375/1200) = 1.10 points. A curve of the MNIST
    // bench (seed 4): best 96.25% at epoch 3, last 95.42% at epoch 8, 0.83 points below.
    const plateau = curve([0.9608, 0.9575, 0.9625, 0.9575, 0.9575, 0.9592, 0.9608, 0.9542]);
    expect(finalTrainingLength(undefined, plateau, 8, 21, 1200)).toMatchObject({ epochs: 21, rule: 'within-noise', detail: expect.stringMatching(/±1\.10 points/) });
    expect(finalTrainingLength(undefined, plateau, 8, undefined, 1200)).toMatchObject({ epochs: 8, rule: 'within-noise' });
    // With 20,000 samples the noise is 0.28 points: the drop is real, the best epoch stands.
    expect(finalTrainingLength(undefined, plateau, 8, 21, 20_000)).toMatchObject({ epochs: 3, rule: 'learning-curve' });
    // A real drop (10 points) on 1,200 samples, and a curve read without validation counts (regression).
    expect(finalTrainingLength(undefined, curve([0.5, 0.9, 0.8, 0.8, 0.8, 0.8]), 6, 14, 1200)).toMatchObject({ epochs: 2, rule: 'learning-curve' });
    expect(finalTrainingLength(undefined, plateau, 8, 21)).toMatchObject({ epochs: 3, rule: 'learning-curve' });
  });

  it("keeps the run file's champion.epochs when it is set", () => {
    expect(finalTrainingLength(12, curve([0.5, 0.9]), 2)).toEqual({ epochs: 12, rule: 'run-file', detail: expect.stringMatching(/champion\.epochs/) });
  });

  it('falls back to the search budget when the curve has no validation scores', () => {
    expect(finalTrainingLength(undefined, curve([null, null]), 4)).toMatchObject({ epochs: 4, rule: 'genome-epochs' });
    expect(finalTrainingLength(undefined, [], 3)).toMatchObject({ epochs: 3, rule: 'genome-epochs' });
  });

  it('names a regression run\'s score a fitness, never an accuracy or a percentage', () => {
    for (const [budgetMax, rule] of [[undefined, 'learning-curve'], [14, 'still-rising']] as const) {
      const length = finalTrainingLength(undefined, curve([0.5, 0.7, 0.8]), 3, budgetMax, undefined, 'regression');
      expect(length.rule).toBe(rule);
      expect(length.detail).toContain('best validation fitness, 0.8000');
      expect(length.detail).not.toMatch(/accuracy|%/i);
    }
    expect(finalTrainingLength(undefined, curve([0.5, 0.7, 0.8]), 3).detail).toContain('best validation accuracy, 80.00%');
  });
});
