/**
 * Codes of {@link DatasetError}, one per way a dataset can be refused before a run starts.
 *
 * | code | meaning | how to fix |
 * |---|---|---|
 * | `NB_DATASET_BAD_OPTIONS` | a generator or split option is out of range | pass a value in the range the message names |
 * | `NB_DATASET_SHAPE_MISMATCH` | features, labels and count disagree with each other or with the input shape | build the samples so that `features.length = count × product(inputShape)` and `labels.length = count` |
 * | `NB_DATASET_TOO_FEW_CLASSES` | fewer than two class names: there is nothing to tell apart | give at least two classes |
 * | `NB_DATASET_BAD_LABEL` | a label is not a class index in `[0, classNames.length)` | map every label to the index of its class name |
 * | `NB_DATASET_CLASS_TOO_SMALL` | a class has fewer samples than a three-way split needs | add samples of that class, or drop or merge the class |
 * | `NB_DATASET_NO_TRAINING_DATA` | the validation and test fractions leave nothing to train on | make `validation + test` smaller than 1 |
 * | `NB_DATASET_UNREADABLE` | a file or folder cannot be read | check the path (relative to the run file's folder) and its permissions |
 * | `NB_DATASET_EMPTY` | a file is empty, or a table has a header and no rows, or a folder has no images | point the run file at the file that holds the data |
 * | `NB_DATASET_BAD_CSV` | the CSV text is malformed: a ragged row, an unclosed quote, a duplicate or empty column name | fix the line the message names |
 * | `NB_DATASET_NO_SUCH_COLUMN` | a column the run file names is not in the header | use a name from the header the message lists |
 * | `NB_DATASET_NOT_A_NUMBER` | a numeric column holds a cell that is not a number | fix the cell, mark it missing, or list the column in `categoricalColumns` |
 * | `NB_DATASET_MISSING_VALUE` | a missing label, or a missing feature under `missing: "error"` | fill the cell, or choose `missing: "fill"` or `"drop-row"` |
 * | `NB_DATASET_BAD_IMAGE` | an image is empty, not PNG or JPEG, or cannot be decoded | replace or remove the file |
 * | `NB_DATASET_MIXED_IMAGE_SIZES` | images differ in size and the run file sets no `imageSize` | set `dataset.imageSize` so every image is resized |
 * | `NB_DATASET_BAD_IDX` | an IDX file has a wrong magic number, an unknown type or a length that does not match its header | use the IDX file itself (not an archive of it), whole |
 * | `NB_DATASET_COUNT_MISMATCH` | the IDX sample and label files hold different counts | pair the images file with its own labels file |
 * | `NB_DATASET_NUMERIC_LABEL` | the run file names no `task` and the label column holds many distinct numbers: a number to predict, not classes | set `dataset.task` to `"regression"` (or `"classification"` if the numbers are class codes) |
 * | `NB_DATASET_CONSTANT_TARGET` | a regression target has a single value (or too few rows to split): there is nothing to learn | point `labelColumn` at a column whose values vary |
 * | `NB_DATASET_TOO_LARGE` | the training shard would exceed the run's `maxDatasetMb` | use fewer or smaller samples (a smaller `imageSize`), or raise `maxDatasetMb` if every worker's `--memory-cap` allows |
 */
export type DatasetErrorCode =
  | 'NB_DATASET_BAD_OPTIONS'
  | 'NB_DATASET_SHAPE_MISMATCH'
  | 'NB_DATASET_TOO_FEW_CLASSES'
  | 'NB_DATASET_BAD_LABEL'
  | 'NB_DATASET_CLASS_TOO_SMALL'
  | 'NB_DATASET_NO_TRAINING_DATA'
  | 'NB_DATASET_UNREADABLE'
  | 'NB_DATASET_EMPTY'
  | 'NB_DATASET_BAD_CSV'
  | 'NB_DATASET_NO_SUCH_COLUMN'
  | 'NB_DATASET_NOT_A_NUMBER'
  | 'NB_DATASET_MISSING_VALUE'
  | 'NB_DATASET_BAD_IMAGE'
  | 'NB_DATASET_MIXED_IMAGE_SIZES'
  | 'NB_DATASET_BAD_IDX'
  | 'NB_DATASET_COUNT_MISMATCH'
  | 'NB_DATASET_NUMERIC_LABEL'
  | 'NB_DATASET_CONSTANT_TARGET'
  | 'NB_DATASET_TOO_LARGE';

/** Where in the user's input the problem is; every part the error can name. */
export interface DatasetErrorLocation {
  /** The file or folder at fault. */
  file?: string;
  /** 1-based line of a text file. */
  line?: number;
  /** A column name, or a field of the run file's dataset settings. */
  field?: string;
}

/** A dataset that cannot be used as given. Not worth retrying: the input has to change. */
export class DatasetError extends Error {
  constructor(
    readonly code: DatasetErrorCode,
    message: string,
    readonly where: DatasetErrorLocation = {},
  ) {
    super(message);
    this.name = 'DatasetError';
  }
}
