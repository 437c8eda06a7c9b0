import { ERROR_CATALOGUE, NetbreederError, type ErrorCode, type HttpErrorCode } from '@netbreeder/shared-types';

export type { HttpErrorCode };

/**
 * The codes the coordinator's HTTP API answers with, each with its status and fix: the entries of
 * the one error catalogue (shared-types/src/errors/error-catalogue.ts) that have an HTTP status.
 */
export const HTTP_ERRORS = Object.fromEntries(Object.entries(ERROR_CATALOGUE).filter(([, e]) => e.status !== null)) as {
  [C in HttpErrorCode]: (typeof ERROR_CATALOGUE)[C] & { status: number };
};

/** True when `code` has an HTTP status, so the API can answer with it. */
export const isHttpErrorCode = (code: ErrorCode): code is HttpErrorCode => ERROR_CATALOGUE[code].status !== null;

/** An error that becomes an HTTP answer `{ error: { code, message, fix } }`. */
export class HttpError extends NetbreederError {
  declare readonly code: HttpErrorCode;

  constructor(code: HttpErrorCode, message: string) {
    super(code, message);
  }

  override get status(): number {
    return HTTP_ERRORS[this.code].status;
  }
}
