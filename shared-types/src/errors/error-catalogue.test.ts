import { readdirSync, readFileSync } from 'node:fs';
import { join, relative } from 'node:path';
import { describe, expect, it } from 'vitest';
import { ERROR_CATALOGUE, isErrorCode, type ErrorCode } from './error-catalogue.js';
import { ERROR_CODES_DOC_PATH, renderErrorCodesPage } from './error-table.js';

const ROOT = join(import.meta.dirname, '..', '..', '..');
const CATALOGUE_FILE = join(import.meta.dirname, 'error-catalogue.ts');
/** Every TypeScript source of the packages, tests and benches. */
const SOURCE_DIRS = ['shared-types/src', 'shared-types/scripts', 'coordinator/src', 'coordinator/bench', 'worker/src', 'worker/bench', 'tests/src'];

function* tsFiles(dir: string): Generator<string> {
  for (const entry of readdirSync(dir, { withFileTypes: true })) {
    const path = join(dir, entry.name);
    if (entry.isDirectory()) yield* tsFiles(path);
    else if (entry.name.endsWith('.ts')) yield path;
  }
}

/** Each quoted `NB_…` code in the sources, with the files that name it (the catalogue and this folder's tests left out). */
function codesInSources(): Map<string, string[]> {
  const found = new Map<string, string[]>();
  for (const file of SOURCE_DIRS.flatMap((d) => [...tsFiles(join(ROOT, d))])) {
    if (file === CATALOGUE_FILE || (file.startsWith(import.meta.dirname) && file.endsWith('.test.ts'))) continue;
    for (const m of readFileSync(file, 'utf8').matchAll(/['"`](NB_[A-Z0-9_]+)['"`]/g)) {
      found.set(m[1]!, [...(found.get(m[1]!) ?? []), relative(ROOT, file)]);
    }
  }
  return found;
}

const codes = Object.keys(ERROR_CATALOGUE) as ErrorCode[];

describe('the error catalogue', () => {
  it('gives every code a status (an HTTP error status or null), a retry flag and a one-sentence fix', () => {
    for (const code of codes) {
      const e = ERROR_CATALOGUE[code];
      expect(code).toMatch(/^NB_[A-Z0-9_]+$/);
      if (e.status !== null) expect(Number.isInteger(e.status) && e.status >= 400 && e.status <= 599, `${code} status ${e.status}`).toBe(true);
      expect(typeof e.retryable).toBe('boolean');
      // One sentence: words, no full stop inside or at the end (the reply puts it after the message).
      expect(e.fix, code).toMatch(/^[a-z"'].{10,}[^.]$/s);
      expect(e.fix, code).not.toMatch(/\.\s/);
    }
  });

  it('holds every code the sources and tests name, and every code it holds is raised somewhere', () => {
    const used = codesInSources();
    const unknown = [...used].filter(([code]) => !isErrorCode(code)).map(([code, files]) => `${code} (${files.join(', ')})`);
    expect(unknown).toEqual([]);
    expect(codes.filter((code) => !used.has(code))).toEqual([]);
  });

  it('leaves library code no bare Error, RangeError or TypeError to throw (a catalogued error or InternalError instead)', () => {
    const bare = ['shared-types/src', 'coordinator/src', 'worker/src']
      .flatMap((d) => [...tsFiles(join(ROOT, d))])
      .filter((file) => !file.endsWith('.test.ts'))
      .flatMap((file) => readFileSync(file, 'utf8').split('\n').flatMap((line, i) => (/\bnew (Error|RangeError|TypeError)\(/.test(line) ? [`${relative(ROOT, file)}:${i + 1}`] : [])));
    expect(bare).toEqual([]);
  });

  it('is the table of docs/error-codes.md, row for row (npm run docs:errors writes it)', () => {
    const page = readFileSync(join(ROOT, ERROR_CODES_DOC_PATH), 'utf8');
    expect(page).toBe(renderErrorCodesPage());
    const rows = [...page.matchAll(/^\| (NB_[A-Z0-9_]+) \| (\d{3}|–) \| (yes|no) \| (.+) \|$/gm)];
    expect(rows.map((r) => r[1])).toEqual(codes);
    for (const [, code, status, retryable] of rows) {
      const e = ERROR_CATALOGUE[code as ErrorCode];
      expect([status, retryable]).toEqual([e.status === null ? '–' : String(e.status), e.retryable ? 'yes' : 'no']);
    }
  });
});
