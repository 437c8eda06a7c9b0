import { describe, expect, it } from 'vitest';
import { preprocessingFileValidator } from '@netbreeder/shared-types';
import type { RunRecord } from '../store/run-store.js';
import { preprocessingFileOf } from './preprocessing-file.js';

const run = (kind: string, preparation?: unknown) =>
  ({ config: { dataset: { kind, delimiter: ';' } }, dataset: { manifest: { inputShape: [16, 16, 1], classNames: ['clean', 'crack'] }, preparation } }) as unknown as Pick<RunRecord, 'config' | 'dataset'>;

describe('preprocessingFileOf', () => {
  it('describes demo tiles as 16×16 grayscale images scaled by 1/255, recorded or not', () => {
    for (const r of [run('demo-tiles'), run('demo-tiles', { preprocessing: { kind: 'demo-tiles', inputShape: [16, 16, 1] } })]) {
      const file = preprocessingFileOf(r)!;
      expect(preprocessingFileValidator.check(file)).toBe(true);
      expect(file.steps).toMatchObject({ kind: 'images', width: 16, height: 16, channels: 1, resize: 'none', scale: 'divide-255' });
    }
  });

  it('gives none for a file-based run from before its import was recorded', () => {
    expect(preprocessingFileOf(run('csv'))).toBeNull();
  });

  it('records an image run\'s size, channels and resize method, and an IDX run\'s type and shape', () => {
    const images = preprocessingFileOf(run('image-folder', { preprocessing: { kind: 'images', folder: '/x', width: 16, height: 16, channels: 1, resize: 'bilinear', scale: 'divide-255', skippedFiles: 0 } }))!;
    expect(images.steps).toEqual({ kind: 'images', width: 16, height: 16, channels: 1, resize: 'bilinear', scale: 'divide-255', layout: 'height-width-channels' });
    const idx = preprocessingFileOf(run('idx', { preprocessing: { kind: 'idx', images: '/a', labels: '/b', typeCode: 8, inputShape: [16, 16, 1], scale: 'divide-255', labelValues: [3, 7] } }))!;
    expect(idx.steps).toEqual({ kind: 'idx', typeCode: 8, sampleShape: [16, 16, 1], scale: 'divide-255', labelValues: [3, 7] });
  });

  it("records a series run's channel scaling and window, and a sequences run's length, pad and cut rules", () => {
    const channels = [{ name: 'temp', mean: 800, std: 300 }];
    const series = preprocessingFileOf(
      run('series-windows', { preprocessing: { kind: 'series-windows', file: '/s.csv', channels, window: 16, stride: 2, labelColumn: 'temp', horizon: 3, steps: { train: 70, val: 15, test: 15 } } }),
    )!;
    expect(series.steps).toEqual({ kind: 'series-windows', delimiter: ';', channels, window: 16, layout: 'time-channels', labelColumn: 'temp', horizon: 3 });
    const sequences = preprocessingFileOf(
      run('sequences', { preprocessing: { kind: 'sequences', file: '/q.csv', idColumn: 'firing', timeColumn: 'minute', channels, length: 40, lengthFrom: 'run-file', cut: 2, padded: 5 } }),
    )!;
    expect(sequences.steps).toMatchObject({ kind: 'sequences', idColumn: 'firing', timeColumn: 'minute', channels, length: 40, pad: 'end-with-training-mean', truncate: 'keep-first-steps' });
  });
});
