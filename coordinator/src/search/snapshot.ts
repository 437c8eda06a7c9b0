import type { Genome, RandomState, SearchAlgorithmName } from '@netbreeder/shared-types';
import type { Observation } from './search-algorithm.js';
import type { ResolvedSearchSettings } from './search-settings.js';
import type { Variation } from './variation.js';

/**
 * The whole state of a search algorithm as plain JSON, so a restarted coordinator continues
 * exactly where it stopped: restoring a snapshot and continuing gives the same proposals as never
 * stopping. Bump the version when the form changes.
 */
export const SEARCH_SNAPSHOT_VERSION = 1;

interface SnapshotBase {
  version: typeof SEARCH_SNAPSHOT_VERSION;
  algorithm: SearchAlgorithmName;
  /** The seed the algorithm was created with (for the record; the state lives in `rng`). */
  seed: number;
  /** State of the algorithm's random source. */
  rng: RandomState;
  /** Proposals made so far. */
  proposed: number;
  /** Observations accepted so far. */
  observed: number;
}

export interface AgingEvolutionSnapshot<G = Genome> extends SnapshotBase {
  algorithm: 'aging-evolution';
  settings: Pick<ResolvedSearchSettings, 'populationSize' | 'sampleSize' | 'initialMutations'>;
  /** Initial members proposed so far. */
  initialProposed: number;
  /** The living members, oldest first. */
  population: Observation<G>[];
}

export interface RandomSearchSnapshot extends SnapshotBase {
  algorithm: 'random';
  settings: Pick<ResolvedSearchSettings, 'randomMutations'>;
}

export type SearchSnapshot<G = Genome> = AgingEvolutionSnapshot<G> | RandomSearchSnapshot;

/** A snapshot that cannot be restored: malformed, or taken by another algorithm or with other settings. */
export class SearchSnapshotError extends Error {
  readonly code = 'NB_BAD_SEARCH_SNAPSHOT';
  constructor(message: string) {
    super(message);
    this.name = 'SearchSnapshotError';
  }
}

const isObject = (v: unknown): v is Record<string, unknown> => typeof v === 'object' && v !== null && !Array.isArray(v);
const isCount = (v: unknown): v is number => Number.isInteger(v) && (v as number) >= 0;
const isUint32 = (v: unknown): boolean => isCount(v) && (v as number) <= 0xffffffff;

/**
 * Checks a stored snapshot (for instance one read back from the store as JSON) and returns it typed.
 * Every population member's genome must have the genome's form and the hash recorded beside it.
 * Throws {@link SearchSnapshotError} listing what is wrong.
 */
export function parseSearchSnapshot<G>(value: unknown, variation: Variation<G>): SearchSnapshot<G> {
  const problems: string[] = [];
  if (!isObject(value)) throw new SearchSnapshotError('search snapshot must be an object');
  if (value.version !== SEARCH_SNAPSHOT_VERSION) problems.push(`version ${String(value.version)} is not ${SEARCH_SNAPSHOT_VERSION}`);
  if (value.algorithm !== 'aging-evolution' && value.algorithm !== 'random') problems.push(`unknown algorithm ${String(value.algorithm)}`);
  if (!isUint32(value.seed)) problems.push('seed must be a 32-bit unsigned integer');
  if (!Array.isArray(value.rng) || value.rng.length !== 4 || !value.rng.every(isUint32)) problems.push('rng must be four 32-bit unsigned integers');
  for (const k of ['proposed', 'observed'] as const) if (!isCount(value[k])) problems.push(`${k} must be a whole number ≥ 0`);
  if (!isObject(value.settings)) problems.push('settings must be an object');
  else {
    const names = value.algorithm === 'random' ? ['randomMutations'] : ['populationSize', 'sampleSize', 'initialMutations'];
    for (const k of names) if (!isCount(value.settings[k])) problems.push(`settings.${k} must be a whole number ≥ 0`);
  }
  if (value.algorithm === 'aging-evolution') {
    if (!isCount(value.initialProposed)) problems.push('initialProposed must be a whole number ≥ 0');
    if (!Array.isArray(value.population)) problems.push('population must be an array');
    else {
      value.population.forEach((m: unknown, i) => {
        if (!isObject(m)) return problems.push(`population[${i}] must be an object`);
        if (typeof m.evaluationId !== 'string' || !m.evaluationId) problems.push(`population[${i}].evaluationId must be a non-empty string`);
        if (typeof m.fitness !== 'number' || !Number.isFinite(m.fitness)) problems.push(`population[${i}].fitness must be a finite number`);
        if (!variation.isGenome(m.genome)) problems.push(`population[${i}].genome does not match the genome schema`);
        else if (variation.hash(m.genome) !== m.genomeHash) problems.push(`population[${i}].genomeHash is not the hash of its genome`);
        return undefined;
      });
    }
  }
  if (problems.length) throw new SearchSnapshotError(`cannot restore the search snapshot: ${problems.join('; ')}`);
  return value as unknown as SearchSnapshot<G>;
}
