import { InternalError, type DatasetSource, type PreparedDataset } from '@netbreeder/shared-types';
import { DatasetError } from './dataset-error.js';
import { generateDemoTiles } from './demo-tiles.js';
import { stratifiedSplit, type SplitFractions } from './split.js';

/**
 * Turns a run file's dataset source into the three splits the run trains, validates and tests on.
 * Pure: only the demo source is generated here. Sources read from files (CSV tables, image folders,
 * IDX files) are read, split and encoded by `loadDataset` in coordinator/src/importers, which
 * splits raw rows first so that encoders are fitted on the training split only.
 *
 * `seed` seeds the split only (a run's seed, say); the demo source carries its own data seed, so
 * one dataset can be split in different ways.
 */
export function prepareDataset(source: DatasetSource, fractions: SplitFractions, seed: number | string): PreparedDataset {
  switch (source.kind) {
    case 'demo-tiles': {
      const tiles = generateDemoTiles({ samplesPerClass: source.samplesPerClass, seed: source.seed });
      return stratifiedSplit(tiles, tiles.inputShape, tiles.classNames, fractions, seed);
    }
    case 'csv':
    case 'image-folder':
    case 'idx':
    case 'series-windows':
    case 'sequences':
      throw new DatasetError(
        'NB_DATASET_BAD_OPTIONS',
        `dataset source kind "${source.kind}" is read from files: load it with loadDataset (coordinator/src/importers), which reads, splits and encodes it`,
        { field: 'dataset.kind' },
      );
    default: {
      const unknown: never = source;
      throw new InternalError(`dataset source kind "${String((unknown as { kind: unknown }).kind)}" is not supported by this coordinator`);
    }
  }
}
