import type { DatasetSource, LabelledSamples, PreparedDataset } from '@netbreeder/shared-types';
import { generateDemoTiles } from './demo-tiles.js';
import { stratifiedSplit, type SplitFractions } from './split.js';

/**
 * Turns a run file's dataset source into the three splits the run trains, validates and tests on.
 * Pure: the demo source is generated here; sources read from files (CSV tables, image folders, IDX
 * files) are meant to be loaded at the edge into {@link LabelledSamples} and then go through the
 * same {@link stratifiedSplit}, each as one more `case` below.
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
    default: {
      const unknown: never = source.kind;
      throw new Error(`dataset source kind "${String(unknown)}" is not supported by this coordinator`);
    }
  }
}
