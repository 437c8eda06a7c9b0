import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { DATASET_SOURCE_SCHEMAS, RunConfigSchema } from '@netbreeder/shared-types';

const doc = readFileSync(join(import.meta.dirname, '..', '..', '..', 'docs', 'run-file.md'), 'utf8');

/** Every property name of a JSON Schema, at any depth (objects, unions, arrays). */
function fieldNames(schema: unknown, into = new Set<string>()): Set<string> {
  if (!schema || typeof schema !== 'object') return into;
  const s = schema as { properties?: Record<string, unknown>; anyOf?: unknown[]; items?: unknown };
  for (const [name, sub] of Object.entries(s.properties ?? {})) {
    into.add(name);
    fieldNames(sub, into);
  }
  for (const sub of s.anyOf ?? []) fieldNames(sub, into);
  fieldNames(s.items, into);
  return into;
}

describe('docs/run-file.md', () => {
  it('names every field a run file may have, in code quotes', () => {
    const names = fieldNames({ anyOf: [RunConfigSchema, ...Object.values(DATASET_SOURCE_SCHEMAS)] });
    expect(names.size).toBeGreaterThan(60);
    const unnamed = [...names].filter((name) => !new RegExp(`\`[^\`\\n]*\\b${name}\\b[^\`\\n]*\``).test(doc));
    expect(unnamed, 'fields docs/run-file.md does not mention').toEqual([]);
  });
});
