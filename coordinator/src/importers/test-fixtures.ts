import { expect } from 'vitest';
import { DatasetError } from '../datasets/dataset-error.js';

/** Shared fixtures of the importers' unit tests (not used by the importers themselves). */

/** The DatasetError `fn` throws (the test fails when it throws nothing or something else). */
export const datasetErrorOf = (fn: () => unknown): DatasetError => {
  try {
    fn();
  } catch (err) {
    expect(err).toBeInstanceOf(DatasetError);
    return err as DatasetError;
  }
  return expect.unreachable('expected a DatasetError');
};
