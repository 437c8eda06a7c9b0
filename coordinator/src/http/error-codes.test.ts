import { ERROR_CATALOGUE } from '@netbreeder/shared-types';
import { describe, expect, it } from 'vitest';
import { HTTP_ERRORS, HttpError } from './error-codes.js';

describe('the HTTP error codes', () => {
  it('are the codes of the error catalogue that have a status, with its status and fix', () => {
    const withStatus = Object.entries(ERROR_CATALOGUE).filter(([, e]) => e.status !== null);
    expect(HTTP_ERRORS).toEqual(Object.fromEntries(withStatus));
    expect(Object.keys(HTTP_ERRORS)).toContain('NB_NO_CHAMPION');
  });

  it('give an HttpError its status and fix', () => {
    const err = new HttpError('NB_CHECKPOINT_TOO_LARGE', 'the checkpoint has 9 bytes, above the cap');
    expect([err.code, err.status, err.fix, err.name]).toEqual(['NB_CHECKPOINT_TOO_LARGE', 413, ERROR_CATALOGUE.NB_CHECKPOINT_TOO_LARGE.fix, 'HttpError']);
  });
});
