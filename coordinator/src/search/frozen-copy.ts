/**
 * A deep copy of a JSON value (a genome), frozen at every depth. The search algorithms keep their
 * members' genomes this way: nobody can change one in place, so snapshots and member lists may
 * share them instead of copying every genome of the population on every save.
 */
export function frozenCopy<T>(value: T): T {
  return deepFreeze(JSON.parse(JSON.stringify(value)) as T);
}

function deepFreeze<T>(value: T): T {
  if (value && typeof value === 'object') {
    for (const v of Object.values(value)) deepFreeze(v);
    Object.freeze(value);
  }
  return value;
}

/** Members read from a snapshot, each holding a frozen copy of its genome. */
export const restoredMembers = <M extends { genome: unknown }>(members: readonly M[]): M[] => members.map((m) => ({ ...m, genome: frozenCopy(m.genome) }));

/** Copies of `members` that share their (frozen) genomes: a member's other fields may change later. */
export const memberCopies = <M extends object>(members: readonly M[]): M[] => members.map((m) => ({ ...m }));
