import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { HTTP_ERRORS } from './error-codes.js';

describe('the HTTP error catalogue', () => {
  it('is the table of DEVELOPERS.md, code for code, with the same HTTP status', () => {
    const guide = readFileSync(fileURLToPath(new URL('../../../DEVELOPERS.md', import.meta.url)), 'utf8');
    const rows = new Map([...guide.matchAll(/^\| (NB_[A-Z_]+) \| (\d{3}) \|/gm)].map((m) => [m[1]!, Number(m[2])]));
    expect(Object.fromEntries(rows)).toEqual(Object.fromEntries(Object.entries(HTTP_ERRORS).map(([code, e]) => [code, e.status])));
  });
});
