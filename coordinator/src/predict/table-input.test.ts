import { describe, expect, it } from 'vitest';
import { createRandom, preprocessingFileValidator, type TableSteps } from '@netbreeder/shared-types';
import { parseCsvTable } from '../importers/csv-table.js';
import { forEachCsvRecord } from '../importers/csv-records.js';
import { encodeTable } from '../datasets/table-encoding.js';
import { preprocessingFileOf } from '../champion/preprocessing-file.js';
import type { RunRecord } from '../store/run-store.js';
import { tableRowsEncoder } from './table-input.js';
import { PredictError } from './predict-error.js';

/** An invented kiln log (seeded): zone (categorical), peak temperature, hold minutes (some missing), outcome. */
function kilnCsv(rows: number, seed: number): string {
  const random = createRandom(seed);
  const lines = ['zone,peak_c,hold_min,operator,outcome'];
  for (let i = 0; i < rows; i++) {
    const zone = ['A', 'B', 'C'][random.int(0, 2)]!;
    const peak = (1150 + random.next() * 120).toFixed(3);
    const hold = random.next() < 0.1 ? 'NA' : String(random.int(10, 40));
    lines.push(`${zone},${peak},${hold},op${i % 4},${Number(peak) > 1210 ? 'cracked' : 'sound'}`);
  }
  return `${lines.join('\n')}\n`;
}

const csvOptions = { labelColumn: 'outcome', delimiter: ',', categoricalColumns: ['zone'], ignoreColumns: ['operator'], missingValues: ['', 'NA'], missing: 'fill' as const };

/** The import of the kiln log, and the `preprocessing.json` steps an export of a run on it holds. */
function imported(text: string) {
  const table = parseCsvTable(text, 'kiln.csv', csvOptions);
  const encoded = encodeTable(table, { fractions: { validation: 0.2, test: 0.2 }, seed: 4, standardize: true, maxDatasetMb: 100, missing: 'fill', missingValues: csvOptions.missingValues });
  const run = {
    config: { dataset: { kind: 'csv', delimiter: ',' } },
    dataset: { manifest: { inputShape: encoded.dataset.inputShape, classNames: encoded.dataset.classNames }, preparation: { preprocessing: encoded.preprocessing } },
  } as unknown as Pick<RunRecord, 'config' | 'dataset'>;
  const file = preprocessingFileOf(run)!;
  return { table, encoded, file, steps: file.steps as TableSteps };
}

function records(text: string): { header: string[]; rows: string[][]; lines: number[] } {
  const all: string[][] = [];
  const lines: number[] = [];
  forEachCsvRecord(text, ',', 'x.csv', (f, line) => {
    all.push([...f]);
    lines.push(line);
  });
  return { header: all[0]!, rows: all.slice(1), lines: lines.slice(1) };
}

describe('preprocessing.json of a CSV run and the predictor\'s table transform', () => {
  it('records the fitted means and standard deviations at full precision, and passes its schema', () => {
    const { encoded, file, steps } = imported(kilnCsv(200, 1));
    expect(preprocessingFileValidator.check(file)).toBe(true);
    expect(file.classNames).toEqual(['cracked', 'sound']);
    expect(steps.columns.map((c) => c.name)).toEqual(['zone', 'peak_c', 'hold_min']);
    const peak = encoded.preprocessing.columns[1]!;
    expect(steps.columns[1]).toEqual(peak);
    expect(JSON.parse(JSON.stringify(file)).steps.columns[1].mean).toBe(peak.kind === 'numeric' && peak.mean);
  });

  it('encodes the raw test rows exactly as the importer encoded the test split, with columns reordered and extra ones present', () => {
    const text = kilnCsv(200, 2);
    const { table, encoded, steps } = imported(text);
    const { rows, lines } = records(text);
    const byLine = new Map(lines.map((l, i) => [l, rows[i]!]));
    const testRows = Array.from(encoded.split.test, (i) => byLine.get(table.lines[i]!)!);
    // New data: another column order, the label column dropped, an extra column added.
    const order = [2, 3, 0, 1]; // hold_min, operator, zone, peak_c
    const header = ['hold_min', 'operator', 'zone', 'peak_c', 'note'];
    const fresh = testRows.map((r) => [...order.map((c) => r[c]!), 'extra']);
    const features = tableRowsEncoder(steps, header, 'new.csv')(fresh, fresh.map((_, i) => i + 2));
    expect(Array.from(features)).toEqual(Array.from(encoded.dataset.test.features));
  });

  it('turns an unseen category into zeros and a missing number into the training mean', () => {
    const { steps } = imported(kilnCsv(200, 3));
    const x = tableRowsEncoder(steps, ['zone', 'peak_c', 'hold_min'], 'new.csv')([['Z', '1200', 'NA']], [2]);
    const zone = steps.columns[0]!;
    const peak = steps.columns[1]!;
    if (zone.kind !== 'categorical' || peak.kind !== 'numeric') throw new Error('zone is categorical, peak_c numeric');
    expect(Array.from(x.subarray(0, zone.categories.length))).toEqual([0, 0, 0]);
    expect(x[peak.offset]).toBeCloseTo((1200 - peak.mean) / peak.std, 5);
    expect(x[steps.columns[2]!.offset]).toBe(0);
  });

  it('refuses a header without training columns, naming each, and a cell that is not a number, naming its line', () => {
    const { steps } = imported(kilnCsv(100, 4));
    let err: unknown = null;
    try {
      tableRowsEncoder(steps, ['zone', 'operator'], 'new.csv');
    } catch (e) {
      err = e;
    }
    expect(err).toBeInstanceOf(PredictError);
    expect((err as PredictError).code).toBe('NB_PREDICT_MISSING_COLUMN');
    expect((err as PredictError).message).toContain('"peak_c", "hold_min"');
    const encode = tableRowsEncoder(steps, ['zone', 'peak_c', 'hold_min'], 'new.csv');
    expect(() => encode([['A', '1200', '20'], ['B', 'hot', '20']], [2, 3])).toThrow(/new\.csv: line 3: column "peak_c" is numeric but holds "hot"/);
    expect(() => encode([['A', '1200']], [2])).toThrow(/line 2 has 2 fields, the header has 3/);
  });
});
