import { describe, expect, it } from 'vitest';
import { CheckpointFormatError } from '../checkpoint/checkpoint-codec.js';
import { ValidationError } from '../validation.js';
import { ERROR_CATALOGUE } from './error-catalogue.js';
import { describeError, InternalError, NetbreederError } from './netbreeder-error.js';

class KilnError extends NetbreederError {
  constructor(message: string) {
    super('NB_DATASET_EMPTY', message);
  }
}

describe('NetbreederError', () => {
  it('carries its code and message and reads status, retry advice and fix from the catalogue', () => {
    const err = new NetbreederError('NB_NO_CHAMPION', 'run kiln-3 has no champion yet');
    expect(err).toBeInstanceOf(Error);
    expect([err.code, err.message, err.name]).toEqual(['NB_NO_CHAMPION', 'run kiln-3 has no champion yet', 'NetbreederError']);
    expect([err.status, err.retryable, err.fix]).toEqual([404, true, ERROR_CATALOGUE.NB_NO_CHAMPION.fix]);
    const local = new NetbreederError('NB_BAD_USAGE', '--workers must be a whole number');
    expect([local.status, local.retryable]).toEqual([null, false]);
  });

  it("names an error after its own class and keeps the cause it was given", () => {
    const cause = new Error('EACCES');
    const err = new KilnError('kiln-log.csv is empty');
    expect([err.name, err.code, err instanceof NetbreederError]).toEqual(['KilnError', 'NB_DATASET_EMPTY', true]);
    expect(new NetbreederError('NB_BAD_RUN_FILE', 'cannot read kiln.json', { cause }).cause).toBe(cause);
  });

  it('is the base of the shared classes, which keep their codes', () => {
    const invalid = new ValidationError('heartbeat', [{ path: '/workerId', message: 'must be string' }]);
    expect([invalid instanceof NetbreederError, invalid.code, invalid.name]).toEqual([true, 'NB_INVALID_MESSAGE', 'ValidationError']);
    const bad = new CheckpointFormatError('bad magic');
    expect([bad instanceof NetbreederError, bad.code, bad.status, bad.name]).toEqual([true, 'NB_BAD_CHECKPOINT', 400, 'CheckpointFormatError']);
  });
});

describe('InternalError', () => {
  it('mark a broken precondition as NB_INTERNAL (a bug, answered with 500)', () => {
    const err = new InternalError('the population is empty');
    expect([err.code, err.status, err.name, err instanceof NetbreederError]).toEqual(['NB_INTERNAL', 500, 'InternalError', true]);
  });
});

describe('describeError', () => {
  it('adds the code of an error of ours to its message, and leaves other errors as they are', () => {
    expect(describeError(new NetbreederError('NB_BAD_USAGE', "--workers must be a whole number from 1 to 64, got 'x'"))).toBe("--workers must be a whole number from 1 to 64, got 'x' [NB_BAD_USAGE]");
    expect(describeError(new Error('EACCES: permission denied'))).toBe('EACCES: permission denied');
    expect(describeError('a string')).toBe('a string');
  });
});
