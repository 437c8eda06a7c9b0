/**
 * Datasets of the coordinator, all pure: the invented demo data (glazing-line tile crops), the
 * honest stratified train / validation / test split, and the step from a run file's dataset source
 * to a {@link PreparedDataset}. Importers of the user's own files (CSV, image folders, IDX) produce
 * `LabelledSamples` at the edge and reuse the split.
 */
export { DatasetError, type DatasetErrorCode } from './dataset-error.js';
export {
  generateDemoTiles,
  DEMO_TILE_SIZE,
  DEMO_TILE_CLASS_NAMES,
  DEMO_TILES_MAX_PER_CLASS,
  type DemoTileClassName,
  type DemoTiles,
  type DemoTilesOptions,
} from './demo-tiles.js';
export {
  stratifiedSplit,
  stratifiedSplitIndices,
  classSplitSizes,
  classCounts,
  selectSamples,
  MIN_SAMPLES_PER_CLASS,
  type SplitFractions,
  type SplitIndices,
} from './split.js';
export { prepareDataset } from './prepare-dataset.js';
