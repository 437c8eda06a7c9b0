import { NetbreederError, type ErrorCode } from '@netbreeder/shared-types';

/**
 * Codes of {@link PredictError}, one per way new data or an export folder is refused by `predict`:
 * the `NB_PREDICT_…` codes of the error catalogue (shared-types/src/errors/error-catalogue.ts,
 * which says how to fix each; docs/error-codes.md lists them).
 */
export type PredictErrorCode = Extract<ErrorCode, `NB_PREDICT_${string}`>;

/** New data or an export that cannot be used as given; the message says what to change. */
export class PredictError extends NetbreederError {
  declare readonly code: PredictErrorCode;

  constructor(code: PredictErrorCode, message: string) {
    super(code, message);
  }
}
