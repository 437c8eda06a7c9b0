import { DatasetError } from '../datasets/dataset-error.js';

export { NUMBER_CELL } from '../datasets/number-cell.js';

/**
 * Splits CSV text into records (RFC 4180): fields separated by `delimiter`, records by LF or CRLF,
 * fields in double quotes may hold delimiters, line breaks and doubled quotes (`""`). A leading
 * byte-order mark is dropped; blank lines are skipped. Calls `onRecord` with the fields of each
 * record and the 1-based line it starts on; the `fields` array is reused between calls, so copy it
 * to keep it. Pure: `file` only names the input in errors.
 */
export function forEachCsvRecord(text: string, delimiter: string, file: string, onRecord: (fields: string[], line: number) => void): void {
  const sep = delimiter.charCodeAt(0);
  const QUOTE = 34;
  const LF = 10;
  const CR = 13;
  const n = text.length;
  let i = text.charCodeAt(0) === 0xfeff ? 1 : 0;
  let line = 1;
  const fields: string[] = [];
  while (i < n) {
    const recordLine = line;
    fields.length = 0;
    // A blank line (only a line break) is skipped.
    const c0 = text.charCodeAt(i);
    if (c0 === LF || (c0 === CR && text.charCodeAt(i + 1) === LF)) {
      i += c0 === CR ? 2 : 1;
      line++;
      continue;
    }
    for (;;) {
      let field: string;
      if (text.charCodeAt(i) === QUOTE) {
        const quoteLine = line;
        let parts = '';
        let start = ++i;
        for (;;) {
          if (i >= n) {
            throw new DatasetError('NB_DATASET_BAD_CSV', `${file}: line ${quoteLine}: a quoted field is never closed; add the closing double quote (write "" for a quote inside a field)`, { file, line: quoteLine });
          }
          const c = text.charCodeAt(i);
          if (c === QUOTE) {
            if (text.charCodeAt(i + 1) === QUOTE) {
              parts += text.slice(start, i + 1);
              i += 2;
              start = i;
              continue;
            }
            parts += text.slice(start, i);
            i++;
            break;
          }
          if (c === LF) line++;
          i++;
        }
        field = parts;
        // After the closing quote only spaces may come before the delimiter or line end.
        while (i < n && text.charCodeAt(i) === 32) i++;
        const after = text.charCodeAt(i);
        if (i < n && after !== sep && after !== LF && after !== CR) {
          throw new DatasetError('NB_DATASET_BAD_CSV', `${file}: line ${line}: text after a closing quote; quote the whole field and write "" for a quote inside it`, { file, line });
        }
      } else {
        const start = i;
        while (i < n) {
          const c = text.charCodeAt(i);
          if (c === sep || c === LF || c === CR) break;
          i++;
        }
        field = text.slice(start, i);
      }
      fields.push(field);
      if (i >= n) break;
      const c = text.charCodeAt(i);
      if (c === sep) {
        i++;
        if (i >= n) {
          fields.push('');
          break;
        }
        continue;
      }
      // End of the record: CRLF, LF or a lone CR.
      i += c === CR && text.charCodeAt(i + 1) === LF ? 2 : 1;
      line++;
      break;
    }
    onRecord(fields, recordLine);
  }
}
