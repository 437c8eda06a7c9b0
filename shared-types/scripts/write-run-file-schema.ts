/** Writes run-file.schema.json at the repository root from the TypeBox run configuration schema. */
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { RUN_FILE_SCHEMA_PATH, runFileJsonSchema } from '../src/index.js';

const path = join(import.meta.dirname, '..', '..', RUN_FILE_SCHEMA_PATH);
writeFileSync(path, `${JSON.stringify(runFileJsonSchema(), null, 2)}\n`);
process.stdout.write(`wrote ${path}\n`);
