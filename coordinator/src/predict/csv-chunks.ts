import { createReadStream } from 'node:fs';
import { createInterface } from 'node:readline';
import { forEachCsvRecord } from '../importers/csv-records.js';

/** A run of consecutive CSV records and the line each starts on. */
export interface CsvChunk {
  records: string[][];
  lines: number[];
}

/**
 * Streams a CSV file as chunks of about `chunkRecords` records (the header is the first record of
 * the first chunk), so a file of any size is never held whole. Lines are gathered until their
 * double quotes balance (a quoted field may span lines), then split by the importer's own
 * {@link forEachCsvRecord}.
 */
export async function* csvChunks(file: string, delimiter: string, chunkRecords = 4096): AsyncGenerator<CsvChunk> {
  const input = createInterface({ input: createReadStream(file, 'utf8'), crlfDelay: Infinity });
  let text = '';
  let textLine = 1;
  let line = 0;
  let pending = 0;
  let quotes = 0;
  const flush = (): CsvChunk => {
    const chunk: CsvChunk = { records: [], lines: [] };
    forEachCsvRecord(text, delimiter, file, (fields, at) => {
      chunk.records.push([...fields]);
      chunk.lines.push(textLine + at - 1);
    });
    text = '';
    pending = 0;
    return chunk;
  };
  for await (const l of input) {
    line++;
    if (text === '' && pending === 0) textLine = line;
    text += `${l}\n`;
    for (let i = 0; i < l.length; i++) if (l.charCodeAt(i) === 34) quotes++;
    if (quotes % 2 === 1) continue;
    pending++;
    if (pending >= chunkRecords) yield flush();
  }
  if (text !== '') yield flush();
}
