import { readFile } from 'node:fs/promises';
import { dirname, resolve } from 'node:path';
import { Value } from '@sinclair/typebox/value';
import { NetbreederError, DATASET_SOURCE_SCHEMAS, RunConfigSchema, createValidator, runConfigValidator, searchSpaceValidator, ValidationError, type RunConfig, type ValidationIssue } from '@netbreeder/shared-types';
import { resolveSourcePaths } from '../importers/load-dataset.js';

/** One validator per dataset source kind, so a bad dataset is reported field by field, not as "matches no kind". */
const sourceValidators = Object.fromEntries(
  Object.entries(DATASET_SOURCE_SCHEMAS).map(([kind, schema]) => [kind, createValidator(`dataset source "${kind}"`, schema)]),
) as Record<string, ReturnType<typeof createValidator>>;

/**
 * Turns a user's run description (from a JSON run file or an HTTP body) into a complete run
 * configuration: defaults filled in, then checked against the schema. Throws a
 * {@link ValidationError} naming every bad field; nothing is changed by a bad configuration.
 */
export function parseRunConfig(input: unknown): RunConfig {
  if (input === null || typeof input !== 'object' || Array.isArray(input)) {
    throw new ValidationError('run configuration', [{ path: '', message: 'must be a JSON object' }]);
  }
  // A run file may name its JSON Schema (run-file.schema.json) for editors; it is no setting.
  const { $schema: _schemaReference, ...settings } = input as Record<string, unknown>;
  const withDefaults = Value.Default(RunConfigSchema, structuredClone(settings)) as Record<string, unknown>;
  const dataset = withDefaults.dataset as { kind?: unknown } | undefined;
  const kind = dataset && typeof dataset === 'object' ? dataset.kind : undefined;
  const issues: ValidationIssue[] = [];
  if (typeof kind === 'string' && kind in sourceValidators) {
    const schema = DATASET_SOURCE_SCHEMAS[kind as keyof typeof DATASET_SOURCE_SCHEMAS];
    withDefaults.dataset = Value.Default(schema, dataset);
    issues.push(...sourceValidators[kind]!.issues(withDefaults.dataset).map((i) => ({ path: `/dataset${i.path}`, message: i.message })));
  } else if (dataset !== undefined) {
    issues.push({ path: '/dataset/kind', message: `must be one of ${Object.keys(DATASET_SOURCE_SCHEMAS).map((k) => `"${k}"`).join(', ')}` });
  }
  // Every other field too, so one look at the error shows all that is wrong.
  issues.push(...runConfigValidator.issues(withDefaults).filter((i) => !i.path.startsWith('/dataset') || dataset === undefined));
  if (issues.length) throw new ValidationError('run configuration', dedupeByPath(issues));
  const config = runConfigValidator.parse(withDefaults);
  if (config.searchSpace) searchSpaceValidator.parse(config.searchSpace);
  return config;
}

/** One issue per field: TypeBox reports a union mismatch once per alternative. */
function dedupeByPath(issues: ValidationIssue[]): ValidationIssue[] {
  const seen = new Set<string>();
  return issues.filter((i) => (seen.has(i.path) ? false : (seen.add(i.path), true)));
}

/** Reads and parses a JSON run file; errors name the file. Dataset paths come back absolute, resolved against the run file's folder. */
export async function readRunConfigFile(path: string): Promise<RunConfig> {
  let text: string;
  try {
    text = await readFile(path, 'utf8');
  } catch (err) {
    throw new NetbreederError('NB_BAD_RUN_FILE', `cannot read run file ${path}: ${(err as Error).message}`);
  }
  return runConfigFromText(text, path);
}

/** Parses the text of a run file that is (or will be) at `path`, as {@link readRunConfigFile} does. */
export function runConfigFromText(text: string, path: string): RunConfig {
  let json: unknown;
  try {
    json = JSON.parse(text);
  } catch (err) {
    throw new NetbreederError('NB_BAD_RUN_FILE', `run file ${path} is not valid JSON: ${(err as Error).message}`);
  }
  try {
    const config = parseRunConfig(json);
    // Data paths in a run file are relative to the run file's folder.
    return { ...config, dataset: resolveSourcePaths(config.dataset, dirname(resolve(path))) };
  } catch (err) {
    if (err instanceof ValidationError) throw new ValidationError(`run file ${path}`, err.issues);
    throw err;
  }
}
