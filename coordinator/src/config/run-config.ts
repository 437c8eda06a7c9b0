import { readFile } from 'node:fs/promises';
import { Value } from '@sinclair/typebox/value';
import { RunConfigSchema, runConfigValidator, searchSpaceValidator, ValidationError, type RunConfig } from '@netbreeder/shared-types';

/**
 * Turns a user's run description (from a JSON run file or an HTTP body) into a complete run
 * configuration: defaults filled in, then checked against the schema. Throws a
 * {@link ValidationError} naming every bad field; nothing is changed by a bad configuration.
 */
export function parseRunConfig(input: unknown): RunConfig {
  if (input === null || typeof input !== 'object' || Array.isArray(input)) {
    throw new ValidationError('run configuration', [{ path: '', message: 'must be a JSON object' }]);
  }
  const withDefaults = Value.Default(RunConfigSchema, structuredClone(input));
  const config = runConfigValidator.parse(withDefaults);
  if (config.searchSpace) searchSpaceValidator.parse(config.searchSpace);
  return config;
}

/** Reads and parses a JSON run file; errors name the file. */
export async function readRunConfigFile(path: string): Promise<RunConfig> {
  let text: string;
  try {
    text = await readFile(path, 'utf8');
  } catch (err) {
    throw new Error(`cannot read run file ${path}: ${(err as Error).message}`);
  }
  let json: unknown;
  try {
    json = JSON.parse(text);
  } catch (err) {
    throw new Error(`run file ${path} is not valid JSON: ${(err as Error).message}`);
  }
  try {
    return parseRunConfig(json);
  } catch (err) {
    if (err instanceof ValidationError) throw new ValidationError(`run file ${path}`, err.issues);
    throw err;
  }
}
