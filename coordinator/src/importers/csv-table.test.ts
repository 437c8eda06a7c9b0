import { describe, expect, it } from 'vitest';
import { DEFAULT_MISSING_VALUE_TOKENS } from '@netbreeder/shared-types';
import { datasetErrorOf } from './test-fixtures.js';
import { forEachCsvRecord } from './csv-records.js';
import { parseCsvTable, type CsvTableOptions } from './csv-table.js';

const options = (o: Partial<CsvTableOptions> = {}): CsvTableOptions => ({
  labelColumn: 'state',
  delimiter: ',',
  categoricalColumns: 'auto',
  ignoreColumns: [],
  missingValues: [...DEFAULT_MISSING_VALUE_TOKENS],
  missing: 'fill',
  ...o,
});

const records = (text: string): Array<[string[], number]> => {
  const out: Array<[string[], number]> = [];
  forEachCsvRecord(text, ',', 'x.csv', (f, line) => out.push([[...f], line]));
  return out;
};

const fails = datasetErrorOf;

describe('forEachCsvRecord', () => {
  it('reads quoted fields with delimiters, doubled quotes and line breaks (RFC 4180), CRLF, a BOM and blank lines', () => {
    const text = '\ufeffa,b\r\n"x, y","say ""hi"""\r\n\r\n"two\nlines",3\n4,\n';
    expect(records(text)).toEqual([
      [['a', 'b'], 1],
      [['x, y', 'say "hi"'], 2],
      [['two\nlines', '3'], 4],
      [['4', ''], 6],
    ]);
  });

  it('names the line of an unclosed quote', () => {
    const err = fails(() => records('a,b\n1,2\n"open,3\n4,5\n'));
    expect(err.code).toBe('NB_DATASET_BAD_CSV');
    expect(err.where).toEqual({ file: 'x.csv', line: 3 });
  });
});

describe('parseCsvTable', () => {
  const kiln = 'zone,temp,humidity,state\nA,812.5,40,ok\nB,799,NA,ok\nA,1020.25,38,overfired\nC,640,41,underfired\n';

  it('types columns automatically: numbers numeric, words categorical; labels sorted into classes', () => {
    const t = parseCsvTable(kiln, 'kiln.csv', options());
    expect(t.rowCount).toBe(4);
    expect(t.classNames).toEqual(['ok', 'overfired', 'underfired']);
    expect([...t.labels]).toEqual([0, 0, 1, 2]);
    expect(t.columns.map((c) => [c.name, c.kind])).toEqual([['zone', 'categorical'], ['temp', 'numeric'], ['humidity', 'numeric']]);
    const humidity = t.columns[2]!;
    expect(humidity.kind === 'numeric' && [...humidity.values]).toEqual([40, Number.NaN, 38, 41]);
    expect([...t.lines]).toEqual([2, 3, 4, 5]);
  });

  it('drops rows with a missing feature under drop-row, refuses them under error, naming the line and column', () => {
    expect(parseCsvTable(kiln, 'kiln.csv', options({ missing: 'drop-row' }))).toMatchObject({ rowCount: 3, droppedRows: 1 });
    const err = fails(() => parseCsvTable(kiln, 'kiln.csv', options({ missing: 'error' })));
    expect(err.code).toBe('NB_DATASET_MISSING_VALUE');
    expect(err.where).toEqual({ file: 'kiln.csv', line: 3, field: 'humidity' });
  });

  it('refuses each kind of bad table with the file, line or column named', () => {
    const cases: Array<[string, Partial<CsvTableOptions>, string, Record<string, unknown>]> = [
      ['', {}, 'NB_DATASET_EMPTY', { file: 'k.csv' }],
      ['zone,temp,state\n', {}, 'NB_DATASET_EMPTY', { file: 'k.csv' }],
      ['zone,temp,state\nA,1,ok\nB,2\n', {}, 'NB_DATASET_BAD_CSV', { file: 'k.csv', line: 3 }],
      ['zone,temp,state\nA,1,ok,extra\n', {}, 'NB_DATASET_BAD_CSV', { file: 'k.csv', line: 2 }],
      ['zone,temp,class\nA,1,ok\n', {}, 'NB_DATASET_NO_SUCH_COLUMN', { file: 'k.csv', line: 1, field: 'state' }],
      ['zone,temp,state\nA,1,ok\n', { ignoreColumns: ['id'] }, 'NB_DATASET_NO_SUCH_COLUMN', { field: 'id' }],
      ['zone,zone,state\nA,1,ok\n', {}, 'NB_DATASET_BAD_CSV', { line: 1, field: 'zone' }],
      ['zone,temp,state\nA,1,\n', {}, 'NB_DATASET_MISSING_VALUE', { line: 2, field: 'state' }],
      // Numeric column (listed categoricals exclude it) with a word in it.
      ['zone,temp,state\nA,1,ok\nB,hot,ok\n', { categoricalColumns: ['zone'] }, 'NB_DATASET_NOT_A_NUMBER', { line: 3, field: 'temp' }],
    ];
    for (const [text, o, code, where] of cases) {
      const err = fails(() => parseCsvTable(text, 'k.csv', options(o)));
      expect(err.code, text).toBe(code);
      expect(err.where, text).toMatchObject(where);
      if (where.line) expect(err.message).toContain(`line ${where.line as number}`);
    }
  });

  it('under auto, takes a column of more than 95% numbers as numeric with a typo, and names the line', () => {
    const rows = Array.from({ length: 40 }, (_, i) => `${i === 17 ? '8l2' : 800 + i},ok`);
    const err = fails(() => parseCsvTable(`temp,state\n${rows.join('\n')}\n`, 'k.csv', options()));
    expect(err.code).toBe('NB_DATASET_NOT_A_NUMBER');
    expect(err.where).toEqual({ file: 'k.csv', line: 19, field: 'temp' });
    // Listed as categorical, the same column is accepted.
    expect(parseCsvTable(`temp,state\n${rows.join('\n')}\n`, 'k.csv', options({ categoricalColumns: ['temp'] })).columns[0]!.kind).toBe('categorical');
  });
});
