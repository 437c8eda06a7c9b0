import { PREPROCESSING_FILE_VERSION, preprocessingFileValidator, type PreprocessingFile } from '@netbreeder/shared-types';
import type { RunRecord } from '../store/run-store.js';
import { DEMO_TILE_SIZE } from '../datasets/demo-tiles.js';

/**
 * The `preprocessing.json` of a run's exports, from what its import recorded (means and standard
 * deviations as fitted, at full precision). A run from before the record, on demo tiles, is
 * described by the tiles' fixed form; another run from before the record has none (null). Pure.
 */
export function preprocessingFileOf(run: Pick<RunRecord, 'config' | 'dataset'>): PreprocessingFile | null {
  const { inputShape, classNames, target } = run.dataset.manifest;
  const p = run.dataset.preparation?.preprocessing ?? (run.config.dataset.kind === 'demo-tiles' ? { kind: 'demo-tiles' as const, inputShape } : null);
  if (!p) return null;
  const file = (steps: PreprocessingFile['steps']): PreprocessingFile =>
    preprocessingFileValidator.parse({ format: 'netbreeder-preprocessing', version: PREPROCESSING_FILE_VERSION, inputShape, classNames, ...(target ? { target } : {}), steps });
  switch (p.kind) {
    case 'demo-tiles':
      return file({
        kind: 'images',
        width: p.inputShape[1] ?? DEMO_TILE_SIZE,
        height: p.inputShape[0] ?? DEMO_TILE_SIZE,
        channels: 1,
        resize: 'none',
        scale: 'divide-255',
        layout: 'height-width-channels',
        note: 'generated demo tiles: brightness floats in [0, 1]; a grayscale PNG of a tile rounds them to bytes',
      });
    case 'table':
      return file({
        kind: 'table',
        delimiter: run.config.dataset.kind === 'csv' ? run.config.dataset.delimiter : ',',
        labelColumn: p.labelColumn,
        columns: p.columns.map((c) => (c.kind === 'numeric' ? { ...c } : { ...c, unseen: 'all-zeros' as const })),
        featureCount: p.featureCount,
        standardized: p.standardized,
        missing: { tokens: p.missingValues, numeric: 'training-mean', categorical: 'all-zeros', trainingRule: p.missing },
        ignoredColumns: p.ignoredColumns,
      });
    case 'images':
      return file({ kind: 'images', width: p.width, height: p.height, channels: p.channels, resize: p.resize, scale: p.scale, layout: 'height-width-channels' });
    case 'idx':
      return file({ kind: 'idx', typeCode: p.typeCode, sampleShape: p.inputShape, scale: p.scale, labelValues: p.labelValues });
    case 'series-windows':
      return file({
        kind: 'series-windows',
        delimiter: run.config.dataset.kind === 'series-windows' ? run.config.dataset.delimiter : ',',
        channels: p.channels.map((c) => ({ ...c })),
        window: p.window,
        layout: 'time-channels',
        labelColumn: p.labelColumn,
        ...(p.horizon ? { horizon: p.horizon } : {}),
      });
    case 'sequences':
      return file({
        kind: 'sequences',
        delimiter: run.config.dataset.kind === 'sequences' ? run.config.dataset.delimiter : ',',
        idColumn: p.idColumn,
        timeColumn: p.timeColumn,
        channels: p.channels.map((c) => ({ ...c })),
        length: p.length,
        pad: 'end-with-training-mean',
        truncate: 'keep-first-steps',
        layout: 'time-channels',
      });
  }
}
