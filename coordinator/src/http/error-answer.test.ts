import { CheckpointFormatError, InternalError, ValidationError } from '@netbreeder/shared-types';
import { describe, expect, it } from 'vitest';
import { ChampionChoiceError } from '../champion/champion-choice.js';
import { DatasetError } from '../datasets/dataset-error.js';
import { GenomeRejectedError, RunStateError } from '../run/run-manager.js';
import { IllegalRunTransitionError } from '../store/run-lifecycle.js';
import { errorAnswer } from './error-answer.js';
import { HttpError } from './error-codes.js';

const codeOf = (err: Error) => errorAnswer(err).code;

describe('errorAnswer', () => {
  it("answers an error of ours with its own code when the catalogue gives it a status below 500", () => {
    expect(codeOf(new HttpError('NB_NO_RUN', 'no run with id kiln-7'))).toBe('NB_NO_RUN');
    expect(codeOf(new RunStateError('cannot pause run kiln-7 while it is finished'))).toBe('NB_RUN_STATE');
    expect(codeOf(new ChampionChoiceError('state', 'run kiln-7 is still searching'))).toBe('NB_RUN_STATE');
    expect(codeOf(new ChampionChoiceError('not-a-result', 'no finished result of that genome'))).toBe('NB_NOT_A_RESULT');
    expect(codeOf(new CheckpointFormatError('bad magic'))).toBe('NB_BAD_CHECKPOINT');
    expect(errorAnswer(new HttpError('NB_NO_RUN', 'no run with id kiln-7'))).toEqual({ code: 'NB_NO_RUN', message: 'no run with id kiln-7', extra: {}, rejected: false });
  });

  it('sends a rejected genome with its issues, logged as a rejected request', () => {
    const answer = errorAnswer(new GenomeRejectedError(['d1: units 0 is below 1']));
    expect(answer).toEqual({ code: 'NB_GENOME_REJECTED', message: 'genome rejected: d1: units 0 is below 1', extra: { issues: ['d1: units 0 is below 1'] }, rejected: true });
  });

  it('answers a request fastify refused with NB_BAD_REQUEST', () => {
    const refused = Object.assign(new Error('body/reason must NOT have fewer than 1 characters'), { validation: [{}], statusCode: 400 });
    expect(errorAnswer(refused)).toMatchObject({ code: 'NB_BAD_REQUEST', rejected: true });
    expect(errorAnswer(Object.assign(new Error('Unsupported Media Type'), { statusCode: 415 }))).toMatchObject({ code: 'NB_BAD_REQUEST', rejected: true });
  });

  it('treats everything else as a bug: NB_INTERNAL (no HTTP status, a 5xx one, or not ours)', () => {
    expect(codeOf(new InternalError('the population is empty'))).toBe('NB_INTERNAL');
    expect(codeOf(new IllegalRunTransitionError('kiln-7', 'finished', 'searching'))).toBe('NB_INTERNAL');
    expect(codeOf(new DatasetError('NB_DATASET_EMPTY', 'kiln-log.csv is empty'))).toBe('NB_INTERNAL');
    expect(codeOf(new ValidationError('evaluation result', [{ path: '/valAccuracy', message: 'must be number' }]))).toBe('NB_INTERNAL');
    expect(codeOf(new Error('database is locked'))).toBe('NB_INTERNAL');
  });
});
