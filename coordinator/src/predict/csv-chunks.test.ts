import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { forEachCsvRecord } from '../importers/csv-records.js';
import { csvChunks } from './csv-chunks.js';

/** Streaming gives the same records and lines as the importer's parser on the whole text, whatever the read size. */
describe('csvChunks', () => {
  let dir: string;
  const text = [
    'note,value,kiln',
    'plain,1,A',
    '"a quoted, field",2,B',
    '"spans',
    'two lines",3,C',
    '',
    '"has ""quotes""",4,A',
    '"three',
    '',
    'lines",5,B',
    'last,6,C',
  ].join('\r\n');

  beforeAll(async () => {
    dir = await mkdtemp(join(tmpdir(), 'nb-csv-chunks-'));
    await writeFile(join(dir, 'in.csv'), `\ufeff${text}`);
  });
  afterAll(async () => rm(dir, { recursive: true, force: true }));

  it('matches forEachCsvRecord on the whole file for reads of 1, 7 and 1 MiB bytes', async () => {
    const expected: Array<[string[], number]> = [];
    forEachCsvRecord(text, ',', 'in.csv', (f, line) => expected.push([[...f], line]));
    expect(expected).toHaveLength(7);
    for (const size of [1, 7, 1 << 20]) {
      const got: Array<[string[], number]> = [];
      for await (const chunk of csvChunks(join(dir, 'in.csv'), ',', size)) chunk.records.forEach((r, i) => got.push([r, chunk.lines[i]!]));
      expect(got, `reads of ${size} bytes`).toEqual(expected);
    }
  });
});
