import { NetbreederError, type ErrorCode } from '@netbreeder/shared-types';

/**
 * Codes of {@link DatasetError}, one per way a dataset can be refused before a run starts: the
 * `NB_DATASET_…` codes of the error catalogue (shared-types/src/errors/error-catalogue.ts, which
 * says how to fix each; docs/error-codes.md lists them).
 */
export type DatasetErrorCode = Extract<ErrorCode, `NB_DATASET_${string}`>;

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
export class DatasetError extends NetbreederError {
  declare readonly code: DatasetErrorCode;

  constructor(
    code: DatasetErrorCode,
    message: string,
    readonly where: DatasetErrorLocation = {},
  ) {
    super(code, message);
  }
}
