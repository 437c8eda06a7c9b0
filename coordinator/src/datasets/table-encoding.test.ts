import { describe, expect, it } from 'vitest';
import type { RawTable } from './raw-table.js';
import { encodeTable } from './table-encoding.js';
import { datasetWarnings, splitClassCounts } from './dataset-report.js';

/** 60 rows, 2 classes; `temp` numeric with one missing value, `glaze` categorical, `batch` constant. */
function table(): RawTable {
  const n = 60;
  const temp = new Float64Array(n);
  const glazeCodes = new Int32Array(n);
  const batch = new Float64Array(n).fill(7);
  const labels = new Int32Array(n);
  for (let i = 0; i < n; i++) {
    labels[i] = i % 2;
    temp[i] = 700 + i * 5 + (i % 2) * 100;
    glazeCodes[i] = i === 59 ? 2 : i % 3 === 0 ? 0 : 1; // code 2 ("celadon") only in row 59
  }
  temp[10] = Number.NaN;
  return {
    file: 'kiln.csv',
    labelColumn: 'state',
    rowCount: n,
    lines: Int32Array.from({ length: n }, (_, i) => i + 2),
    labels,
    classNames: ['ok', 'overfired'],
    columns: [
      { kind: 'numeric', name: 'temp', values: temp },
      { kind: 'categorical', name: 'glaze', codes: glazeCodes, values: ['matte', 'gloss', 'celadon'] },
      { kind: 'numeric', name: 'batch', values: batch },
    ],
    droppedRows: 0,
    ignoredColumns: [],
  };
}

const options = { fractions: { validation: 0.2, test: 0.2 }, seed: 3, standardize: true, maxDatasetMb: 100, missing: 'fill' as const, missingValues: ['NA'] };

describe('encodeTable', () => {
  it('fits means, standard deviations and categories on the training rows only', () => {
    const raw = table();
    const { dataset, preprocessing, split } = encodeTable(raw, options);
    const temp = raw.columns[0]!;
    const trainTemps = [...split.train].map((i) => (temp.kind === 'numeric' ? temp.values[i]! : 0)).filter((v) => !Number.isNaN(v));
    const mean = trainTemps.reduce((a, b) => a + b, 0) / trainTemps.length;
    const std = Math.sqrt(trainTemps.reduce((a, b) => a + (b - mean) ** 2, 0) / trainTemps.length);
    const enc = preprocessing.columns[0]!;
    expect(enc.kind === 'numeric' && enc.mean).toBeCloseTo(mean, 9);
    expect(enc.kind === 'numeric' && enc.std).toBeCloseTo(std, 9);
    // Standardised training column: mean 0, sd 1 (the missing value counts as the mean).
    const width = preprocessing.featureCount;
    const col = Array.from({ length: dataset.train.count }, (_, k) => dataset.train.features[k * width]!);
    expect(col.reduce((a, b) => a + b, 0) / col.length).toBeCloseTo(0, 5);
    // Row 59 ("celadon") is not in training here, so the category list holds only what training saw.
    const inTrain = [...split.train].includes(59);
    const glaze = preprocessing.columns[1]!;
    expect(glaze.kind === 'categorical' && glaze.categories).toEqual(inTrain ? ['celadon', 'gloss', 'matte'] : ['gloss', 'matte']);
    expect(width).toBe(1 + (inTrain ? 3 : 2) + 1);
    expect(dataset.inputShape).toEqual([width]);
  });

  it('encodes a category unseen in training as all zeros, and a missing number as the training mean (0)', () => {
    // Pick a seed for which row 59 lands outside training (the split is seeded, so this is fixed).
    let found: ReturnType<typeof encodeTable> | null = null;
    for (let seed = 0; seed < 50 && !found; seed++) {
      const r = encodeTable(table(), { ...options, seed });
      if (![...r.split.train].includes(59) && ![...r.split.train].includes(10)) found = r;
    }
    expect(found).not.toBeNull();
    const { dataset, split, preprocessing } = found!;
    const w = preprocessing.featureCount;
    for (const [name, samples, indices] of [['val', dataset.val, split.val], ['test', dataset.test, split.test]] as const) {
      const k59 = [...indices].indexOf(59);
      if (k59 >= 0) expect([...samples.features.subarray(k59 * w + 1, k59 * w + 3)], name).toEqual([0, 0]);
      const k10 = [...indices].indexOf(10);
      if (k10 >= 0) expect(samples.features[k10 * w], name).toBe(0);
    }
  });

  it('refuses a table whose training shard exceeds maxDatasetMb, before encoding', () => {
    expect(() => encodeTable(table(), { ...options, maxDatasetMb: 0.0001 })).toThrow(/maxDatasetMb of 0.0001 MiB/);
  });

  it('reports the constant column and no duplicates for distinct rows', () => {
    const { dataset, constantColumns } = encodeTable(table(), options);
    expect(constantColumns).toEqual(['batch']);
    const warnings = datasetWarnings(dataset, splitClassCounts(dataset), constantColumns);
    expect(warnings.map((w) => w.code)).toEqual(['constant-columns']);
  });
});

describe('datasetWarnings', () => {
  it('flags tiny classes, imbalance and rows repeated across splits', () => {
    const n = 60;
    const temp = new Float64Array(n);
    const labels = new Int32Array(n);
    for (let i = 0; i < n; i++) {
      labels[i] = i < 54 ? 0 : 1; // 54 against 6: tiny and imbalanced
      temp[i] = i % 10; // only 10 distinct rows: duplicates across splits are certain
    }
    const raw: RawTable = { ...table(), rowCount: n, labels, columns: [{ kind: 'numeric', name: 'temp', values: temp }] };
    const { dataset, constantColumns } = encodeTable(raw, options);
    const codes = datasetWarnings(dataset, splitClassCounts(dataset), constantColumns).map((w) => w.code);
    expect(codes).toEqual(['tiny-class', 'class-imbalance', 'duplicates-across-splits']);
  });
});
