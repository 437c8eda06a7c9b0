/** Writes docs/error-codes.md from the error catalogue (shared-types/src/errors/error-catalogue.ts). */
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { ERROR_CODES_DOC_PATH, renderErrorCodesPage } from '../src/errors/error-table.js';

const path = join(import.meta.dirname, '..', '..', ERROR_CODES_DOC_PATH);
writeFileSync(path, renderErrorCodesPage());
process.stdout.write(`wrote ${path}\n`);
