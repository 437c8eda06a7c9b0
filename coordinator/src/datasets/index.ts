/**
 * Datasets of the coordinator, all pure: the invented demo data (glazing-line tile crops), the
 * honest stratified train / validation / test split, and the step from a run file's dataset source
 * to a {@link PreparedDataset}. Importers of the user's own files (CSV, image folders, IDX) produce
 * `LabelledSamples` at the edge and reuse the split.
 */
export { DatasetError, type DatasetErrorCode, type DatasetErrorLocation } from './dataset-error.js';
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
export { generateKilnCurves, KILN_OUTCOMES, type KilnCurvesOptions, type KilnOutcome } from './kiln-curves.js';
export { encodeTable, encodeColumns, type EncodedTable, type TableEncodingOptions } from './table-encoding.js';
export type { RawTable, RawColumn, RawNumericColumn, RawCategoricalColumn } from './raw-table.js';
export { checkShardSize, shardBytes } from './shard-size.js';
export {
  datasetWarnings,
  duplicatesAcrossSplits,
  splitClassCounts,
  TINY_CLASS_TRAIN_SAMPLES,
  IMBALANCE_RATIO,
  type DatasetWarning,
  type SplitClassCounts,
} from './dataset-report.js';
export {
  describePreprocessing,
  type DatasetPreparation,
  type DatasetPreprocessing,
  type ColumnEncoding,
  type NumericColumnEncoding,
  type CategoricalColumnEncoding,
  type TablePreprocessing,
  type ImagePreprocessing,
  type IdxPreprocessing,
  type DemoPreprocessing,
} from './preprocessing.js';
