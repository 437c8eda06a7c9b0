import { createRandom } from '@netbreeder/shared-types';
import { describe, expect, it } from 'vitest';
import { guessCsvSource, guessDelimiter, profileCsv } from './csv-guess.js';

/** An invented glazing-bench log: rows drawn from a seeded source, columns as given. */
function glazeLog(rows: number, columns: Record<string, (i: number, r: ReturnType<typeof createRandom>) => string>, delimiter = ','): string {
  const r = createRandom(11);
  const names = Object.keys(columns);
  const lines = [names.join(delimiter)];
  for (let i = 0; i < rows; i++) lines.push(names.map((n) => columns[n]!(i, r)).join(delimiter));
  return `${lines.join('\n')}\n`;
}

const guess = (text: string, options = {}) => guessCsvSource(profileCsv(text, 'log.csv'), options);
const roles = (text: string, options = {}) => Object.fromEntries(guess(text, options).columns.map((c) => [c.name, c.role]));

describe('guessing a CSV run file', () => {
  it('takes the column named like a label, wherever it is, and says so', () => {
    const g = guess(glazeLog(60, { verdict: (i) => ['ok', 'runs', 'crawl'][i % 3]!, bench: (_, r) => r.pick(['a', 'b']), glaze_mm: (_, r) => r.uniform(0.2, 1.5).toFixed(2) }));
    expect(g.labelColumn).toBe('verdict');
    expect(g.labelReason).toContain('its name');
    expect(g.task).toBe('classification');
    expect(g.taskReason).toContain('3 classes');
  });

  it('otherwise takes the last usable column, leaving out ids, row numbers, constants and free text', () => {
    const text = glazeLog(60, {
      row: (i) => String(i + 1),
      batchCode: (i) => `B-${1000 + i}`,
      note: (i) => `note number ${i} about the glaze`,
      site: () => 'workshop',
      bench: (_, r) => r.pick(['left', 'right', 'window']),
      temp_c: (_, r) => r.uniform(18, 26).toFixed(1),
      seq: (i) => String(i),
      thickness_mm: (_, r) => r.uniform(0.2, 1.5).toFixed(3),
    });
    const g = guess(text);
    expect(g.labelColumn).toBe('thickness_mm');
    expect(g.labelReason).toContain('last usable column');
    expect(roles(text)).toEqual({ row: 'ignored', batchCode: 'ignored', note: 'ignored', site: 'ignored', bench: 'categorical', temp_c: 'numeric', seq: 'ignored', thickness_mm: 'label' });
    const reasons = Object.fromEntries(g.columns.map((c) => [c.name, c.reason]));
    expect(reasons.row).toContain('identifies the row');
    expect(reasons.note).toContain('its own text');
    expect(reasons.site).toContain('same value');
    expect(reasons.seq).toContain('counts the rows');
  });

  it('calls a label of more than 20 distinct numbers regression, and a few numbers classes', () => {
    const many = glazeLog(80, { temp_c: (_, r) => r.uniform(18, 26).toFixed(1), drying_min: (_, r) => r.uniform(10, 90).toFixed(1) });
    expect(guess(many)).toMatchObject({ labelColumn: 'drying_min', task: 'regression', missing: 'fill' });
    const few = glazeLog(80, { temp_c: (_, r) => r.uniform(18, 26).toFixed(1), coats: (i) => String(1 + (i % 3)) });
    expect(guess(few)).toMatchObject({ labelColumn: 'coats', task: 'classification' });
    expect(guess(few, { task: 'regression' })).toMatchObject({ task: 'regression', taskReason: 'you named it (--task)' });
  });

  it('drops rows with a missing regression target (a target is never filled)', () => {
    const text = glazeLog(50, { temp_c: (_, r) => r.uniform(18, 26).toFixed(1), drying_min: (i, r) => (i % 10 === 3 ? 'NA' : r.uniform(10, 90).toFixed(1)) });
    expect(guess(text)).toMatchObject({ task: 'regression', missing: 'drop-row' });
  });

  it('reads a few stray marks in a numeric column as missing values, and leaves out a numeric column with many words', () => {
    const text = glazeLog(100, {
      temp_c: (i, r) => (i === 17 ? '-' : i === 40 ? 'n.m.' : r.uniform(18, 26).toFixed(1)),
      humidity: (i, r) => (i % 30 === 5 ? `broken sensor ${i}` : r.uniform(30, 60).toFixed(0)),
      outcome: (i) => ['ok', 'runs'][i % 2]!,
    });
    const g = guess(text);
    expect(g.extraMissingValues.sort()).toEqual(['-', 'n.m.']);
    const temp = g.columns.find((c) => c.name === 'temp_c')!;
    expect(temp).toMatchObject({ role: 'numeric', missing: 2 });
    expect(temp.reason).toContain('line 19');
    expect(g.columns.find((c) => c.name === 'humidity')).toMatchObject({ role: 'ignored' });
  });

  it('follows --label, and names the header when the column is not there', () => {
    const text = glazeLog(30, { bench: (i) => ['a', 'b'][i % 2]!, outcome: (i) => ['ok', 'runs', 'crawl'][i % 3]! });
    expect(guess(text, { label: 'bench' })).toMatchObject({ labelColumn: 'bench', labelReason: 'you named it (--label)' });
    expect(() => guess(text, { label: 'colour' })).toThrow(/"colour", which is not in the header \("bench", "outcome"\)/);
  });

  it('refuses a table with nothing to learn from, saying why', () => {
    expect(() => guess(glazeLog(30, { id: (i) => String(i), outcome: (i) => ['ok', 'runs'][i % 2]! }))).toThrow(/no feature column is left besides the label "outcome" \(id: its name says it identifies the row\)/);
    expect(() => guess('id,site\n1,x\n2,x\n')).toThrow(/no column can be the label/);
    expect(() => profileCsv('a,b\n', 'log.csv')).toThrow(/no data rows/);
    expect(() => profileCsv('a,b\n1,2\n3\n', 'log.csv')).toThrow(/line 3 has 1 fields, the header has 2/);
  });

  it('finds the delimiter on the header line', () => {
    expect(guessDelimiter('a;b;c\n1;2;3')).toBe(';');
    expect(guessDelimiter('a\tb\n1\t2')).toBe('\t');
    expect(guessDelimiter('only\n1')).toBe(',');
    const text = glazeLog(40, { temp_c: (_, r) => r.uniform(18, 26).toFixed(1), outcome: (i) => ['ok', 'runs'][i % 2]! }, ';');
    expect(guess(text)).toMatchObject({ delimiter: ';', labelColumn: 'outcome' });
  });
});
