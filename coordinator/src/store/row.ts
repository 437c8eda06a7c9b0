/**
 * Typed reads of the columns of one row as better-sqlite3 returns it. Each checks the value has
 * the type the schema (./migrations.ts) gives the column, so a mapper needs no casts, and a store
 * file that does not match this code fails with the column's name instead of handing on a wrong
 * value.
 */
import { NetbreederError } from '@netbreeder/shared-types';

/** One row: column name → value. */
export type Row = Record<string, unknown>;

function wrongType(column: string, wanted: string, value: unknown): Error {
  const held = value === null || value === undefined ? 'no value' : `a ${typeof value} (${String(value).slice(0, 40)})`;
  return new NetbreederError('NB_STORE_VERSION', `store column '${column}' holds ${held}, not ${wanted}; the store file does not match this version of netbreeder (open it with the version that wrote it)`);
}

/** A TEXT column that is never NULL. */
export function text(row: Row, column: string): string {
  const value = row[column];
  if (typeof value !== 'string') throw wrongType(column, 'text', value);
  return value;
}

/** An INTEGER or REAL column that is never NULL. */
export function num(row: Row, column: string): number {
  const value = row[column];
  if (typeof value !== 'number') throw wrongType(column, 'a number', value);
  return value;
}

/** A TEXT column that may be NULL (or absent from the row). */
export function textOrNull(row: Row, column: string): string | null {
  return row[column] == null ? null : text(row, column);
}

/** An INTEGER or REAL column that may be NULL (or absent from the row). */
export function numOrNull(row: Row, column: string): number | null {
  return row[column] == null ? null : num(row, column);
}

/** An INTEGER column holding 0 or 1. */
export function flag(row: Row, column: string): boolean {
  return num(row, column) === 1;
}

/** A TEXT column holding one of `allowed`. */
export function oneOf<T extends string | number>(row: Row, column: string, allowed: readonly T[]): T {
  const value = row[column];
  const found = allowed.find((a) => a === value);
  if (found === undefined) throw wrongType(column, `one of ${allowed.join(', ')}`, value);
  return found;
}

/** A TEXT column of JSON the store wrote itself (from a value of type `T`). */
export function json<T>(row: Row, column: string): T {
  return JSON.parse(text(row, column)) as T;
}

/** A TEXT column of JSON the store wrote itself, or NULL (or empty): null. */
export function jsonOrNull<T>(row: Row, column: string): T | null {
  const value = textOrNull(row, column);
  return value ? (JSON.parse(value) as T) : null;
}
