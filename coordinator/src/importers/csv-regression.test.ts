import { describe, expect, it } from 'vitest';
import { createRandom, DEFAULT_MISSING_VALUE_TOKENS, MAX_AUTO_NUMERIC_CLASSES, regressionMetrics } from '@netbreeder/shared-types';
import { datasetErrorOf } from './test-fixtures.js';
import { encodeTable, unstandardizeTarget } from '../datasets/table-encoding.js';
import { parseCsvTable, type CsvTableOptions } from './csv-table.js';

const options = (o: Partial<CsvTableOptions> = {}): CsvTableOptions => ({
  labelColumn: 'shrink',
  delimiter: ',',
  categoricalColumns: 'auto',
  ignoreColumns: [],
  missingValues: [...DEFAULT_MISSING_VALUE_TOKENS],
  missing: 'fill',
  ...o,
});

const fails = datasetErrorOf;

/** A seeded table: shrink = 2 + 0.01 · temp + noise, so the target has as many distinct values as rows. */
function table(rows: number, seed = 3): string {
  const r = createRandom(`csv-regression ${seed}`);
  const lines = ['temp,glaze,shrink'];
  for (let i = 0; i < rows; i++) {
    const temp = 1000 + r.next() * 300;
    lines.push(`${temp.toFixed(1)},${r.next() < 0.5 ? 'matte' : 'gloss'},${(2 + 0.01 * temp + r.next()).toFixed(3)}`);
  }
  return `${lines.join('\n')}\n`;
}

const fractions = { validation: 0.15, test: 0.15 };
const encoding = { fractions, seed: 1, standardize: true, maxDatasetMb: 64, missing: 'fill' as const, missingValues: [] };

describe('a numeric label column without a task', () => {
  it('is refused with a short message that suggests "task": "regression" and says how many distinct values it saw', () => {
    const err = fails(() => parseCsvTable(table(200), 'k.csv', options()));
    expect(err.code).toBe('NB_DATASET_NUMERIC_LABEL');
    expect(err.message).toContain('"task": "regression"');
    expect(err.message).toMatch(/holds (\d+) distinct numbers/);
    expect(Number(/holds (\d+) distinct/.exec(err.message)![1])).toBeGreaterThan(MAX_AUTO_NUMERIC_CLASSES);
    expect(err.message.length).toBeLessThan(300);
  });

  it('is read as classes when the run file says classification, and few distinct numbers stay classes without a task', () => {
    const few = 'a,shrink\n' + Array.from({ length: 30 }, (_, i) => `${i},${i % 3}`).join('\n');
    expect(parseCsvTable(few, 'k.csv', options()).classNames).toEqual(['0', '1', '2']);
    expect(parseCsvTable(table(40), 'k.csv', options({ task: 'classification' })).classNames.length).toBe(40);
  });
});

describe('a regression table', () => {
  it('keeps each target, bins rows by target quantile, and standardises the target on the training split only', () => {
    const raw = parseCsvTable(table(200), 'k.csv', options({ task: 'regression' }));
    expect(raw.targets!.length).toBe(200);
    expect(raw.classNames.length).toBe(10);
    const { dataset, preprocessing, split } = encodeTable(raw, encoding);
    const scaling = dataset.target!;
    expect(preprocessing.target).toEqual(scaling);
    // Training targets after scaling: mean 0, population standard deviation 1 (definition of the scaling).
    const t = dataset.train.targets!;
    const mean = t.reduce((a, b) => a + b, 0) / t.length;
    const sd = Math.sqrt(t.reduce((a, b) => a + (b - mean) ** 2, 0) / t.length);
    expect(mean).toBeCloseTo(0, 5);
    expect(sd).toBeCloseTo(1, 5);
    // Every split covers every quantile bin of the target (stratified), so each sees the whole range.
    for (const split of [dataset.train, dataset.val, dataset.test]) expect(new Set(split.labels).size).toBe(10);
    // The scaling round-trips: every test target read back equals its cell in the file.
    dataset.test.targets!.forEach((v, k) => expect(unstandardizeTarget(v, scaling)).toBeCloseTo(raw.targets![split.test[k]!]!, 4));
  });

  it('refuses a non-numeric target naming its line, a missing one unless missing is drop-row, and a constant one', () => {
    const text = 'temp,shrink\n1,2.5\n2,3.5\n3,oops\n';
    const bad = fails(() => parseCsvTable(text, 'k.csv', options({ task: 'regression' })));
    expect([bad.code, bad.where.line]).toEqual(['NB_DATASET_NOT_A_NUMBER', 4]);
    const gap = 'temp,shrink\n' + Array.from({ length: 12 }, (_, i) => `${i},${i === 5 ? '' : i * 0.5}`).join('\n');
    const missing = fails(() => parseCsvTable(gap, 'k.csv', options({ task: 'regression' })));
    expect([missing.code, missing.where.line]).toEqual(['NB_DATASET_MISSING_VALUE', 7]);
    expect(missing.message).toContain('never filled');
    const dropped = parseCsvTable(gap, 'k.csv', options({ task: 'regression', missing: 'drop-row' }));
    expect([dropped.rowCount, dropped.droppedRows]).toEqual([11, 1]);
    const flat = 'temp,shrink\n' + Array.from({ length: 12 }, (_, i) => `${i},4`).join('\n');
    expect(fails(() => parseCsvTable(flat, 'k.csv', options({ task: 'regression' }))).code).toBe('NB_DATASET_CONSTANT_TARGET');
  });
});

describe('regressionMetrics', () => {
  it('matches RMSE, MAE and R² computed by hand', () => {
    // actual 1, 2, 3, 4 (mean 2.5, SST 5); predicted 1.5, 2, 2, 5: errors 0.5, 0, −1, 1.
    // SSE = 0.25 + 0 + 1 + 1 = 2.25; MSE 0.5625; RMSE 0.75; MAE 2.5 / 4 = 0.625; R² = 1 − 2.25 / 5 = 0.55.
    const m = regressionMetrics([1, 2, 3, 4], [1.5, 2, 2, 5]);
    expect(m.mse).toBeCloseTo(0.5625, 12);
    expect(m.rmse).toBeCloseTo(0.75, 12);
    expect(m.mae).toBeCloseTo(0.625, 12);
    expect(m.r2).toBeCloseTo(0.55, 12);
    // Predicting the actual mean scores R² = 0 and RMSE = the population standard deviation (√1.25).
    const flat = regressionMetrics([1, 2, 3, 4], [2.5, 2.5, 2.5, 2.5]);
    expect(flat.r2).toBeCloseTo(0, 12);
    expect(flat.rmse).toBeCloseTo(Math.sqrt(1.25), 12);
  });
});
