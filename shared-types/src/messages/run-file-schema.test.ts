import { readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { Ajv } from 'ajv';
import { describe, expect, it } from 'vitest';
import { RUN_FILE_SCHEMA_PATH, runFileJsonSchema } from './run-file-schema.js';

const root = join(import.meta.dirname, '..', '..', '..');
const readJson = (path: string): unknown => JSON.parse(readFileSync(path, 'utf8'));

describe('run-file.schema.json', () => {
  it('is the one generated from the TypeBox run configuration schema (else: npm run schema:run-file)', () => {
    expect(readJson(join(root, RUN_FILE_SCHEMA_PATH))).toEqual(runFileJsonSchema());
  });

  // Checked with ajv, an independent JSON Schema (draft 07) validator, as an editor would check.
  it('accepts every shipped example run file, with or without a $schema reference, and refuses a wrong one', () => {
    const validate = new Ajv({ strict: false }).compile(readJson(join(root, RUN_FILE_SCHEMA_PATH)) as object);
    const examples = readdirSync(join(root, 'examples')).filter((f) => f.endsWith('-run.json'));
    expect(examples.length).toBeGreaterThan(0);
    for (const name of examples) {
      const file = readJson(join(root, 'examples', name)) as Record<string, unknown>;
      expect(validate(file), `${name}: ${JSON.stringify(validate.errors)}`).toBe(true);
      expect(validate({ $schema: '../run-file.schema.json', ...file })).toBe(true);
    }
    expect(validate({ dataset: { kind: 'csv', path: 'a.csv' } })).toBe(false); // no labelColumn
    expect(validate({ dataset: { kind: 'demo-tiles' }, budget: { maxMinutes: -1 } })).toBe(false);
    expect(validate({ dataset: { kind: 'demo-tiles' }, colour: 'blue' })).toBe(false);
  });
});
