import { NetbreederError, type Genome, type RandomState, type SearchAlgorithmName } from '@netbreeder/shared-types';
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

/** One result in a rung of successive halving. */
export interface AshaRungMember<G = Genome> {
  evaluationId: string;
  genomeHash: string;
  genome: G;
  fitness: number;
  /** True once it was proposed for the next rung (whether or not that result ever arrived). */
  promoted: boolean;
}

export interface AshaSnapshot<G = Genome> extends SnapshotBase {
  algorithm: 'asha' | 'asha-evolution';
  settings: Pick<ResolvedSearchSettings, 'eta' | 'minEpochs' | 'maxEpochs'>;
  /** Promotions proposed so far. */
  promotions: number;
  /** Results ignored because their budget matched no rung. */
  offRung: number;
  /** Each rung's results in arrival order, lowest rung first. */
  rungs: AshaRungMember<G>[][];
  /** The state of the source of new configurations (random search or aging evolution); `rng` above is a copy of its random state. */
  source: AgingEvolutionSnapshot<G> | RandomSearchSnapshot;
}

/** A member of multi-objective evolution: its accuracy and the size objective it is weighed against. */
export interface ParetoMember<G = Genome> {
  evaluationId: string;
  genomeHash: string;
  genome: G;
  fitness: number;
  /** The value of the run's objective (parameter count or FLOPs), minimised. */
  cost: number;
}

export interface ParetoEvolutionSnapshot<G = Genome> extends SnapshotBase {
  algorithm: 'pareto-evolution';
  settings: Pick<ResolvedSearchSettings, 'populationSize' | 'sampleSize' | 'initialMutations' | 'objective'>;
  /** Initial members proposed so far. */
  initialProposed: number;
  /** The living members, oldest first. */
  population: ParetoMember<G>[];
}

export type SearchSnapshot<G = Genome> = AgingEvolutionSnapshot<G> | RandomSearchSnapshot | AshaSnapshot<G> | ParetoEvolutionSnapshot<G>;

/** A snapshot that cannot be restored: malformed, or taken by another algorithm or with other settings. */
export class SearchSnapshotError extends NetbreederError {
  constructor(message: string) {
    super('NB_BAD_SEARCH_SNAPSHOT', message);
  }
}

const isObject = (v: unknown): v is Record<string, unknown> => typeof v === 'object' && v !== null && !Array.isArray(v);
const isCount = (v: unknown): v is number => Number.isInteger(v) && (v as number) >= 0;
const isUint32 = (v: unknown): boolean => isCount(v) && (v as number) <= 0xffffffff;
const isFiniteNumber = (v: unknown): v is number => typeof v === 'number' && Number.isFinite(v);

const ALGORITHMS = ['aging-evolution', 'random', 'asha', 'asha-evolution', 'pareto-evolution'] as const;
/** The whole-number settings each algorithm's snapshot records. */
const COUNT_SETTINGS: Record<(typeof ALGORITHMS)[number], readonly string[]> = {
  'aging-evolution': ['populationSize', 'sampleSize', 'initialMutations'],
  random: ['randomMutations'],
  asha: ['eta', 'minEpochs', 'maxEpochs'],
  'asha-evolution': ['eta', 'minEpochs', 'maxEpochs'],
  'pareto-evolution': ['populationSize', 'sampleSize', 'initialMutations'],
};

/** Checks a list of members (genome, hash, id, fitness, and `extra` fields), adding what is wrong to `problems`. */
function checkMembers<G>(
  list: unknown,
  path: string,
  variation: Variation<G>,
  problems: string[],
  extra: (m: Record<string, unknown>, at: string) => void = () => undefined,
): void {
  if (!Array.isArray(list)) {
    problems.push(`${path} must be an array`);
    return;
  }
  list.forEach((m: unknown, i) => {
    const at = `${path}[${i}]`;
    if (!isObject(m)) return problems.push(`${at} must be an object`);
    if (typeof m.evaluationId !== 'string' || !m.evaluationId) problems.push(`${at}.evaluationId must be a non-empty string`);
    if (!isFiniteNumber(m.fitness)) problems.push(`${at}.fitness must be a finite number`);
    if (!variation.isGenome(m.genome)) problems.push(`${at}.genome does not match the genome schema`);
    else if (variation.hash(m.genome) !== m.genomeHash) problems.push(`${at}.genomeHash is not the hash of its genome`);
    extra(m, at);
    return undefined;
  });
}

/**
 * Checks a stored snapshot (for instance one read back from the store as JSON) and returns it typed.
 * Every member's genome must have the genome's form and the hash recorded beside it; a successive
 * halving snapshot's configuration source is checked the same way. Throws {@link SearchSnapshotError}
 * listing what is wrong.
 */
export function parseSearchSnapshot<G>(value: unknown, variation: Variation<G>): SearchSnapshot<G> {
  const problems: string[] = [];
  if (!isObject(value)) throw new SearchSnapshotError('search snapshot must be an object');
  const algorithm = ALGORITHMS.find((a) => a === value.algorithm);
  if (value.version !== SEARCH_SNAPSHOT_VERSION) problems.push(`version ${String(value.version)} is not ${SEARCH_SNAPSHOT_VERSION}`);
  if (!algorithm) problems.push(`unknown algorithm ${String(value.algorithm)}`);
  if (!isUint32(value.seed)) problems.push('seed must be a 32-bit unsigned integer');
  if (!Array.isArray(value.rng) || value.rng.length !== 4 || !value.rng.every(isUint32)) problems.push('rng must be four 32-bit unsigned integers');
  for (const k of ['proposed', 'observed'] as const) if (!isCount(value[k])) problems.push(`${k} must be a whole number ≥ 0`);
  if (!isObject(value.settings)) problems.push('settings must be an object');
  else if (algorithm) {
    for (const k of COUNT_SETTINGS[algorithm]) if (!isCount(value.settings[k])) problems.push(`settings.${k} must be a whole number ≥ 0`);
    if (algorithm === 'pareto-evolution' && value.settings.objective !== 'params' && value.settings.objective !== 'flops') {
      problems.push(`settings.objective must be "params" or "flops"`);
    }
  }
  if (algorithm === 'aging-evolution' || algorithm === 'pareto-evolution') {
    if (!isCount(value.initialProposed)) problems.push('initialProposed must be a whole number ≥ 0');
    checkMembers(value.population, 'population', variation, problems, (m, at) => {
      if (algorithm === 'pareto-evolution' && !(isFiniteNumber(m.cost) && m.cost >= 0)) problems.push(`${at}.cost must be a finite number ≥ 0`);
    });
  }
  if (algorithm === 'asha' || algorithm === 'asha-evolution') {
    for (const k of ['promotions', 'offRung'] as const) if (!isCount(value[k])) problems.push(`${k} must be a whole number ≥ 0`);
    if (!Array.isArray(value.rungs) || !value.rungs.length) problems.push('rungs must be a non-empty array');
    else {
      value.rungs.forEach((rung: unknown, k) =>
        checkMembers(rung, `rungs[${k}]`, variation, problems, (m, at) => {
          if (typeof m.promoted !== 'boolean') problems.push(`${at}.promoted must be true or false`);
        }),
      );
    }
    const want = algorithm === 'asha' ? 'random' : 'aging-evolution';
    if (!isObject(value.source) || value.source.algorithm !== want) problems.push(`source must be a '${want}' snapshot`);
    else {
      try {
        parseSearchSnapshot(value.source, variation);
        if (JSON.stringify(value.source.rng) !== JSON.stringify(value.rng)) problems.push('rng must equal source.rng');
      } catch (err) {
        if (!(err instanceof SearchSnapshotError)) throw err;
        problems.push(`source: ${err.message}`);
      }
    }
  }
  if (problems.length) throw new SearchSnapshotError(`cannot restore the search snapshot: ${problems.join('; ')}`);
  return value as unknown as SearchSnapshot<G>;
}
