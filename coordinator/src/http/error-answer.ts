import { NetbreederError } from '@netbreeder/shared-types';
import { GenomeRejectedError } from '../run/run-manager.js';
import { HTTP_ERRORS, isHttpErrorCode, type HttpErrorCode } from './error-codes.js';

/** How the HTTP API answers an error a route threw. */
export interface ErrorAnswer {
  code: HttpErrorCode;
  message: string;
  /** Fields added to the reply's `error` object. */
  extra: Record<string, unknown>;
  /** True when the request itself was at fault (logged as a rejected request). */
  rejected: boolean;
}

/**
 * The answer to an error thrown while serving a request: an error of ours whose code has an HTTP
 * status below 500 answers with that code (a rejected genome with its issues too); a request that
 * fastify refused (schema, body) is NB_BAD_REQUEST; anything else is a bug, NB_INTERNAL.
 */
export function errorAnswer(err: Error & { validation?: unknown; statusCode?: number }): ErrorAnswer {
  if (err instanceof GenomeRejectedError) return { code: 'NB_GENOME_REJECTED', message: err.message, extra: { issues: err.issues }, rejected: true };
  if (err instanceof NetbreederError && isHttpErrorCode(err.code) && HTTP_ERRORS[err.code].status < 500) return { code: err.code, message: err.message, extra: {}, rejected: false };
  if (err.validation || (err.statusCode && err.statusCode < 500)) return { code: 'NB_BAD_REQUEST', message: err.message, extra: {}, rejected: true };
  return { code: 'NB_INTERNAL', message: err.message, extra: {}, rejected: false };
}
