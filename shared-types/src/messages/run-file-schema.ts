import { RunConfigSchema } from './run-config.js';

/** Where the repository keeps the generated schema, relative to its root. */
export const RUN_FILE_SCHEMA_PATH = 'run-file.schema.json';

type JsonObject = { [key: string]: unknown };

/**
 * The JSON Schema (draft 07) of a run file, generated from the TypeBox {@link RunConfigSchema} that
 * the coordinator checks run files with, so editors can complete and check them. A field with a
 * default may be left out of a run file, so it is not `required` here; a top-level `$schema`
 * (the reference to this file) is allowed.
 */
export function runFileJsonSchema(): JsonObject {
  const schema = optionalDefaults(JSON.parse(JSON.stringify(RunConfigSchema)) as JsonObject);
  const properties = schema.properties as JsonObject;
  return {
    $schema: 'http://json-schema.org/draft-07/schema#',
    title: 'netbreeder run file',
    description: 'What to search, on what data, for how long; a field with a default may be left out.',
    ...schema,
    properties: { $schema: { type: 'string', description: 'this schema, for editors' }, ...properties },
  };
}

function optionalDefaults(node: JsonObject): JsonObject {
  for (const [key, value] of Object.entries(node)) {
    if (Array.isArray(value)) node[key] = value.map((v: unknown) => (v && typeof v === 'object' ? optionalDefaults(v as JsonObject) : v));
    else if (value && typeof value === 'object') node[key] = optionalDefaults(value as JsonObject);
  }
  if (Array.isArray(node.required) && node.properties && typeof node.properties === 'object') {
    const properties = node.properties as Record<string, JsonObject>;
    const required = (node.required as string[]).filter((name) => properties[name]?.default === undefined);
    if (required.length) node.required = required;
    else delete node.required;
  }
  return node;
}
