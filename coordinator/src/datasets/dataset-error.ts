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
 */
export type DatasetErrorCode =
  | 'NB_DATASET_BAD_OPTIONS'
  | 'NB_DATASET_SHAPE_MISMATCH'
  | 'NB_DATASET_TOO_FEW_CLASSES'
  | 'NB_DATASET_BAD_LABEL'
  | 'NB_DATASET_CLASS_TOO_SMALL'
  | 'NB_DATASET_NO_TRAINING_DATA';

/** A dataset that cannot be used as given. Not worth retrying: the input has to change. */
export class DatasetError extends Error {
  constructor(
    readonly code: DatasetErrorCode,
    message: string,
  ) {
    super(message);
    this.name = 'DatasetError';
  }
}
