import { NetbreederError } from '@netbreeder/shared-types';
import { START_KINDS, type StartKind } from './family-genome.js';

/** Settings of a search algorithm, as a run gives them. Defaults are applied in {@link resolveSearchSettings} only. */
export interface SearchSettings {
  /** Living members that parents are drawn from (P in regularized evolution). */
  populationSize: number;
  /** Members drawn, with replacement, per tournament (S in regularized evolution). */
  sampleSize: number;
  /** Most random mutations applied to the minimal genome of an initial member of aging evolution;
   * each initial member gets a count drawn uniformly from 0 to this, so the first population is
   * diverse without being far from minimal.
   * @default 2 */
  initialMutations?: number;
  /** Most random mutations applied to the minimal genome of a random-search sample; each sample
   * gets a count drawn uniformly from 0 to this.
   * @default 12 */
  randomMutations?: number;
  /** Reduction factor of successive halving: rung k+1 trains eta times longer than rung k, and the
   * top floor(|rung k| / eta) of rung k are promoted.
   * @default 3 */
  eta?: number;
  /** Epochs of the lowest rung of successive halving, where every new configuration starts.
   * @default 1 */
  minEpochs?: number;
  /** Epochs of the top rung of successive halving (the rungs are minEpochs·eta^k below it, then this).
   * @default 9 */
  maxEpochs?: number;
  /** What multi-objective selection minimises against validation accuracy.
   * @default 'params' */
  objective?: SizeObjective;
  /** Where fresh genomes (initial members, random-search samples) come from: the hand-made family
   * around the reference network, the minimal linear classifier, or either with even odds (see
   * `StartKind`). A run file gets 'family' from its schema; absent here means a run stored before
   * the setting existed, which started from minimal genomes and must replay as it ran.
   * @default 'minimal' */
  start?: StartKind;
  /** Successive halving: the run's reference network moves up every rung whatever its rank, so the
   * champion's choice always has it at the top rung's budget (the run file's `search.promoteReference`).
   * @default false */
  promoteReference?: boolean;
  /** asha-evolution: how tournaments rank the members parents are drawn from: by their rung-0
   * fitness, or by the highest rung each member's genome reached first and its fitness there
   * second (the run file's `search.parents`). A run file gets its schema's default; absent here
   * means a run stored before the setting existed, which ranked by rung-0 fitness.
   * @default 'first-rung' */
  parents?: ParentRanking;
}

/** How asha-evolution's tournaments rank members: `first-rung` (their rung-0 fitness) or `highest-rung` (highest rung reached, then fitness there). */
export type ParentRanking = 'first-rung' | 'highest-rung';
export const PARENT_RANKINGS: readonly ParentRanking[] = ['first-rung', 'highest-rung'];

/** A size or cost to minimise against accuracy: the genome's parameter count, its FLOPs per sample, or its measured CPU latency per sample (ms). */
export type SizeObjective = 'params' | 'flops' | 'latency';
export const SIZE_OBJECTIVES: readonly SizeObjective[] = ['params', 'flops', 'latency'];

export type ResolvedSearchSettings = Required<SearchSettings>;

/** The one place the optional settings get their defaults (the run file schema carries the same ones, checked by a test). */
export const SEARCH_SETTING_DEFAULTS = { initialMutations: 2, randomMutations: 12, eta: 3, minEpochs: 1, maxEpochs: 9, objective: 'params', start: 'minimal', promoteReference: false, parents: 'first-rung' } as const;

/** Applies the defaults and checks every value, naming the one that is wrong. */
export function resolveSearchSettings(settings: SearchSettings): ResolvedSearchSettings {
  const d = SEARCH_SETTING_DEFAULTS;
  const resolved: ResolvedSearchSettings = {
    populationSize: settings.populationSize,
    sampleSize: settings.sampleSize,
    initialMutations: settings.initialMutations ?? d.initialMutations,
    randomMutations: settings.randomMutations ?? d.randomMutations,
    eta: settings.eta ?? d.eta,
    minEpochs: settings.minEpochs ?? d.minEpochs,
    maxEpochs: settings.maxEpochs ?? d.maxEpochs,
    objective: settings.objective ?? d.objective,
    start: settings.start ?? d.start,
    promoteReference: settings.promoteReference ?? d.promoteReference,
    parents: settings.parents ?? d.parents,
  };
  const whole = (name: Exclude<keyof ResolvedSearchSettings, 'objective' | 'start' | 'promoteReference' | 'parents'>, min: number) => {
    const v = resolved[name];
    if (!Number.isInteger(v) || v < min) throw new NetbreederError('NB_BAD_SEARCH_SETTINGS', `search setting ${name} must be a whole number ≥ ${min}, got ${String(v)}`);
  };
  whole('populationSize', 1);
  whole('sampleSize', 1);
  whole('initialMutations', 0);
  whole('randomMutations', 0);
  whole('eta', 2);
  whole('minEpochs', 1);
  whole('maxEpochs', 1);
  if (resolved.maxEpochs < resolved.minEpochs) {
    throw new NetbreederError('NB_BAD_SEARCH_SETTINGS', `search setting maxEpochs (${resolved.maxEpochs}) must be at least minEpochs (${resolved.minEpochs}); raise maxEpochs or lower minEpochs`);
  }
  if (!SIZE_OBJECTIVES.includes(resolved.objective)) {
    throw new NetbreederError('NB_BAD_SEARCH_SETTINGS', `search setting objective must be one of ${SIZE_OBJECTIVES.join(', ')}, got ${String(resolved.objective)}`);
  }
  if (!START_KINDS.includes(resolved.start)) {
    throw new NetbreederError('NB_BAD_SEARCH_SETTINGS', `search setting start must be one of ${START_KINDS.join(', ')}, got ${String(resolved.start)}`);
  }
  if (!PARENT_RANKINGS.includes(resolved.parents)) {
    throw new NetbreederError('NB_BAD_SEARCH_SETTINGS', `search setting parents must be one of ${PARENT_RANKINGS.join(', ')}, got ${String(resolved.parents)}`);
  }
  return resolved;
}
