/**
 * Importers of the user's own data, the I/O edge of datasets: CSV tables, folders of labelled
 * images, IDX files. Each reads files and hands typed raw data to the pure parts (parsers here,
 * split and encoding in ../datasets); {@link loadDataset} runs the whole step for a run.
 */
export { loadDataset, resolveSourcePaths, type LoadedDataset, type LoadDatasetOptions, type DatasetRunSettings } from './load-dataset.js';
export { forEachCsvRecord } from './csv-records.js';
export { parseCsvTable, AUTO_NUMERIC_SHARE, type CsvTableOptions } from './csv-table.js';
export { listImageFolder, decodeImageFolder, firstImageSize, type ImageFolderListing } from './image-folder.js';
export { decodeImage, MAX_IMAGE_SIDE, type DecodedImage } from './image-decode.js';
export { writeModelPixels, axisTaps, type PixelTarget } from './image-pixels.js';
export { parseIdx, IDX_TYPES, type IdxArray } from './idx-format.js';
export { pairIdx, idxFeatures, readIdxFile, type IdxPair } from './idx-files.js';
