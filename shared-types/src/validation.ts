import type { Static, TSchema } from '@sinclair/typebox';
import { FormatRegistry } from '@sinclair/typebox';
import { TypeCompiler } from '@sinclair/typebox/compiler';
import { NetbreederError } from './errors/netbreeder-error.js';

// The string formats our schemas use; TypeBox knows none by itself.
if (!FormatRegistry.Has('date-time')) {
  FormatRegistry.Set('date-time', (v) => /^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}:\d{2}(\.\d+)?(Z|[+-]\d{2}:\d{2})$/.test(v) && !Number.isNaN(Date.parse(v)));
}

/** One problem found in a message: where (a JSON pointer) and what is wrong. */
export interface ValidationIssue {
  path: string;
  message: string;
}

/** Thrown by {@link Validator.parse}: names the message kind and every problem found. */
export class ValidationError extends NetbreederError {
  constructor(
    readonly messageKind: string,
    readonly issues: ValidationIssue[],
  ) {
    super(
      'NB_INVALID_MESSAGE',
      `invalid ${messageKind}: ` +
        issues
          .slice(0, 8)
          .map((i) => `${i.path || '(root)'} ${i.message}`)
          .join('; ') +
        (issues.length > 8 ? `; and ${issues.length - 8} more` : ''),
    );
  }
}

/** A compiled schema check for one message kind. */
export interface Validator<S extends TSchema> {
  readonly kind: string;
  readonly schema: S;
  /** True when `value` matches the schema. */
  check(value: unknown): value is Static<S>;
  /** Every problem with `value`; empty when it matches. */
  issues(value: unknown): ValidationIssue[];
  /** Returns `value` typed when it matches, else throws a {@link ValidationError}. */
  parse(value: unknown): Static<S>;
}

/** Compiles `schema` once (at start-up, so a bad schema fails at boot) into a {@link Validator}. */
export function createValidator<S extends TSchema>(kind: string, schema: S): Validator<S> {
  const compiled = TypeCompiler.Compile(schema);
  // Listing errors walks the whole value and is far slower than the compiled check: only a value
  // that fails the check is walked.
  const issues = (value: unknown): ValidationIssue[] =>
    compiled.Check(value) ? [] : [...compiled.Errors(value)].map((e) => ({ path: e.path, message: e.message }));
  return {
    kind,
    schema,
    check: (value: unknown): value is Static<S> => compiled.Check(value),
    issues,
    parse(value: unknown): Static<S> {
      if (compiled.Check(value)) return value;
      throw new ValidationError(kind, issues(value));
    },
  };
}
