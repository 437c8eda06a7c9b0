/**
 * Codes of {@link PredictError}, one per way new data or an export folder is refused by `predict`.
 *
 * | code | meaning | how to fix |
 * |---|---|---|
 * | `NB_PREDICT_NO_EXPORT` | the folder lacks `preprocessing.json`, `model.json` or a file they name | export the run again with this version (`netbreeder export`) |
 * | `NB_PREDICT_BAD_EXPORT` | `preprocessing.json` has an unknown version or does not match its schema | use the netbreeder version that wrote the export |
 * | `NB_PREDICT_MISSING_COLUMN` | the CSV lacks a column the model was trained on | add the named columns (same header as training) |
 * | `NB_PREDICT_BAD_CELL` | a numeric cell is not a number, or a row has the wrong number of fields | fix the named line |
 * | `NB_PREDICT_BAD_IMAGE` | an image cannot be decoded, or has the wrong size for an export that does not resize | replace, resize or remove the named file |
 * | `NB_PREDICT_BAD_IDX` | the IDX samples have another type or shape than the training samples | use IDX samples of the shape preprocessing.json names |
 */
export type PredictErrorCode = 'NB_PREDICT_NO_EXPORT' | 'NB_PREDICT_BAD_EXPORT' | 'NB_PREDICT_MISSING_COLUMN' | 'NB_PREDICT_BAD_CELL' | 'NB_PREDICT_BAD_IMAGE' | 'NB_PREDICT_BAD_IDX';

/** New data or an export that cannot be used as given; the message says what to change. */
export class PredictError extends Error {
  constructor(
    readonly code: PredictErrorCode,
    message: string,
  ) {
    super(message);
    this.name = 'PredictError';
  }
}
