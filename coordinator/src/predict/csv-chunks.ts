import { createReadStream } from 'node:fs';
import { forEachCsvRecord } from '../importers/csv-records.js';

/** A run of consecutive CSV records and the line each starts on. */
export interface CsvChunk {
  records: string[][];
  lines: number[];
}

/** Index just past the last line feed of `text` that lies outside double quotes, or -1. */
function lastRecordEnd(text: string): number {
  let inQuotes = false;
  let end = -1;
  for (let i = 0; i < text.length; i++) {
    const c = text.charCodeAt(i);
    if (c === 34) inQuotes = !inQuotes;
    else if (c === 10 && !inQuotes) end = i + 1;
  }
  return end;
}

/**
 * Streams a CSV file as chunks of whole records (the header is the first record of the first
 * chunk), reading about `chunkBytes` at a time, so a file of any size is never held whole. Each
 * piece is cut after its last line feed outside quotes (a quoted field may span lines) and split
 * by the importer's own {@link forEachCsvRecord}.
 */
export async function* csvChunks(file: string, delimiter: string, chunkBytes = 1 << 20): AsyncGenerator<CsvChunk> {
  let carry = '';
  let firstLine = 1;
  const parse = (text: string): CsvChunk => {
    const chunk: CsvChunk = { records: [], lines: [] };
    forEachCsvRecord(text, delimiter, file, (fields, line) => {
      chunk.records.push([...fields]);
      chunk.lines.push(firstLine + line - 1);
    });
    for (let i = 0; i < text.length; i++) if (text.charCodeAt(i) === 10) firstLine++;
    return chunk;
  };
  for await (const piece of createReadStream(file, { encoding: 'utf8', highWaterMark: chunkBytes })) {
    const text = carry + (piece as string);
    const cut = lastRecordEnd(text);
    if (cut < 0) {
      carry = text;
      continue;
    }
    carry = text.slice(cut);
    yield parse(text.slice(0, cut));
  }
  if (carry !== '') yield parse(carry);
}
