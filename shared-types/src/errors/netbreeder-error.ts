import { ERROR_CATALOGUE, type ErrorCode } from './error-catalogue.js';

/**
 * The base of every error netbreeder raises on purpose: a `code` of {@link ERROR_CATALOGUE}, a
 * message that says what went wrong, and (from the catalogue) the HTTP status, whether another
 * attempt may succeed, and how to fix it. Families and one-off classes extend it; a code without a
 * class of its own is thrown as a `NetbreederError` itself.
 */
export class NetbreederError extends Error {
  constructor(
    readonly code: ErrorCode,
    message: string,
    options?: ErrorOptions,
  ) {
    super(message, options);
    this.name = new.target.name;
  }

  /** The HTTP status the coordinator answers with, or null when this error never crosses HTTP. */
  get status(): number | null {
    return ERROR_CATALOGUE[this.code].status;
  }

  /** True when trying again unchanged (later, or on another worker) may succeed. */
  get retryable(): boolean {
    return ERROR_CATALOGUE[this.code].retryable;
  }

  /** One sentence on how to fix it. */
  get fix(): string {
    return ERROR_CATALOGUE[this.code].fix;
  }
}

/**
 * A check that cannot fail unless netbreeder itself has a bug (a caller broke a documented
 * precondition, a state that cannot happen). Code `NB_INTERNAL`: the coordinator answers 500 and
 * logs the stack. Anything a user's input, files, settings or network can cause gets a code of
 * its own instead.
 */
export class InternalError extends NetbreederError {
  constructor(message: string, options?: ErrorOptions) {
    super('NB_INTERNAL', message, options);
  }
}

/** One line for a person: the message and, for an error of ours, its code (docs/error-codes.md says how to fix each). */
export const describeError = (err: unknown): string => (err instanceof NetbreederError ? `${err.message} [${err.code}]` : err instanceof Error ? err.message : String(err));
