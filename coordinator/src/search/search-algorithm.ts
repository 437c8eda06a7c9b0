import { checkGenome, InternalError, NetbreederError, createRandom, type DataShape, type Genome, type SearchAlgorithmName, type SearchDecision, type SearchSpace } from '@netbreeder/shared-types';
import { AgingEvolution } from './aging-evolution.js';
import { minimalGenome } from './minimal-genome.js';
import type { Mutation, MutateOptions } from './mutations.js';
import { ParetoEvolution } from './pareto-evolution.js';
import { RandomSearch } from './random-search.js';
import { resolveSearchSettings, type SearchSettings } from './search-settings.js';
import { parseSearchSnapshot, SearchSnapshotError, type SearchSnapshot } from './snapshot.js';
import { SuccessiveHalving } from './successive-halving.js';
import { genomeVariation } from './variation.js';
import type { FirstGenome } from './proposals.js';

/** One genome the algorithm wants trained, with its lineage and why it was chosen. */
export interface Proposal<G = Genome> {
  genome: G;
  /** `genomeHash(genome)`. */
  genomeHash: string;
  /** Hashes of the parent(s); empty for an initial or random genome. */
  parentHashes: string[];
  /** The mutation that made it from its parent; null when it has no parent. */
  mutation: Mutation | null;
  /** One line for the record: why this genome, from which parent, by which change. */
  reason: string;
  /**
   * Training epochs for this evaluation, for multi-fidelity algorithms (a low rung trains briefly);
   * absent: the genome's own `training.epochs`.
   */
  budgetEpochs?: number;
  /** For a promotion: the evaluation of the lower rung it was promoted from (weight inheritance continues its checkpoint). */
  promotedFrom?: string;
  /**
   * Every choice that led to this proposal, in order, with its reason (tournament, mutation,
   * promotion, …): what the coordinator stores with the proposal and replay compares. The
   * algorithms here always fill it; a proposal made outside an algorithm (a user's genome) has none.
   */
  decisions?: SearchDecision[];
}

/** A finished evaluation the algorithm learns from. */
export interface Observation<G = Genome> {
  /** The evaluation's id (its job id); an observation already held is ignored. */
  evaluationId: string;
  /** `genomeHash(genome)`; checked on arrival. */
  genomeHash: string;
  genome: G;
  /** Validation accuracy: higher is better. A finite number. */
  fitness: number;
  /** Epochs the evaluation trained for (its budget), for multi-fidelity algorithms. */
  budgetEpochs?: number;
  /** Size and cost of the genome, for multi-objective algorithms (from `analyzeGenome`). */
  params?: number;
  flops?: number;
  /** Milliseconds one sample takes alone on the worker's CPU (measured after training), for the `latency` objective. */
  latency?: number;
  /** Seconds the training took on its worker. */
  trainSeconds?: number;
}

/**
 * What every search algorithm does. The coordinator calls `propose()` whenever it wants another
 * genome to train (no barrier: several proposals may be in flight), and `observe()` when an
 * evaluation's result is recorded. Evaluations that failed may be left unobserved (they then never
 * enter the population) or observed with fitness 0 (they then take a place and age out). The
 * algorithm does no I/O: `snapshot()` returns its whole state as JSON for the store.
 */
export interface SearchAlgorithm<G = Genome> {
  readonly name: string;
  propose(): Proposal<G>;
  /** Learns from a result; returns what it did with it (joined, removed whom, ignored why), for the record. */
  observe(o: Observation<G>): SearchDecision[];
  /**
   * Removes from the population (or rungs) every member whose evaluation `drop` names, as if its
   * result had never arrived: the results of a quarantined worker no longer count for selection.
   * Returns how many members were removed. Algorithms that keep no members (random search) need
   * not have it.
   */
  forget?(drop: (evaluationId: string) => boolean): number;
  /** JSON-serializable state, the random source's included; pass it back to the factory to resume. */
  snapshot(): SearchSnapshot<G>;
}

/** What the factory needs about the run besides the algorithm's settings. */
export interface SearchContext {
  /** The rules every proposed genome obeys (each proposal passes `checkGenome` against it). */
  space: SearchSpace;
  /** Input shape and class count of the run's dataset. */
  data: DataShape;
  /** Seeds every random draw of the search (a 32-bit unsigned integer, as the run config has it). */
  seed: number;
  /** How mutations are drawn (operator weights, retry budget). @default the documented defaults of `mutate` */
  mutation?: MutateOptions;
  /**
   * The run's reference network, already fitted to `space` (`fitReferenceNetwork`): every algorithm
   * proposes it as its first new configuration. @default none
   */
  reference?: FirstGenome<Genome>;
}

export const SEARCH_ALGORITHM_NAMES: readonly SearchAlgorithmName[] = ['aging-evolution', 'random', 'asha', 'asha-evolution', 'pareto-evolution'];

/**
 * Builds the named algorithm over network genomes, or restores it from `snapshot` so it continues
 * exactly where the snapshot was taken. Throws when the name is unknown, the seed is not a 32-bit
 * unsigned integer, a setting is out of range, the space cannot hold even a linear classifier
 * (`MinimalGenomeError`), or the snapshot is malformed or was taken by another algorithm or with
 * other settings (`SearchSnapshotError`).
 */
export function createSearchAlgorithm(
  name: SearchAlgorithmName,
  settings: SearchSettings,
  ctx: SearchContext,
  snapshot?: SearchSnapshot,
): SearchAlgorithm {
  if (!SEARCH_ALGORITHM_NAMES.includes(name)) throw new NetbreederError('NB_BAD_SEARCH_SETTINGS', `unknown search algorithm '${String(name)}'; use one of ${SEARCH_ALGORITHM_NAMES.join(', ')}`);
  if (!Number.isInteger(ctx.seed) || ctx.seed < 0 || ctx.seed > 0xffffffff) throw new NetbreederError('NB_BAD_SEARCH_SETTINGS', `search seed must be a 32-bit unsigned integer, got ${ctx.seed}`);
  const resolved = resolveSearchSettings(settings);
  minimalGenome({ space: ctx.space, data: ctx.data, rng: createRandom(0) }); // fails fast when nothing fits the space
  const variation = genomeVariation(ctx.space, ctx.data, ctx.mutation, resolved.start);
  const restored = snapshot === undefined ? undefined : parseSearchSnapshot(snapshot, variation);
  if (restored && restored.algorithm !== name) throw new SearchSnapshotError(`the snapshot belongs to '${restored.algorithm}', not '${name}'`);
  if (restored && restored.seed !== ctx.seed) throw new SearchSnapshotError(`the snapshot was seeded with ${restored.seed}, not ${ctx.seed}; resume with the run's own seed`);
  const seed = ctx.seed;
  const first = ctx.reference;
  if (first) {
    const check = checkGenome(first.genome, ctx.space, ctx.data);
    if (!check.ok) throw new InternalError(`the reference network does not fit the search space (${check.issues.map((i) => i.message).join('; ')}); fit it with fitReferenceNetwork`);
  }
  switch (name) {
    case 'random':
      return new RandomSearch({ settings: resolved, variation, seed, first, snapshot: restored?.algorithm === 'random' ? restored : undefined });
    case 'asha':
    case 'asha-evolution':
      return new SuccessiveHalving({ variant: name, settings: resolved, variation, seed, first, snapshot: restored?.algorithm === name ? restored : undefined });
    case 'pareto-evolution':
      return new ParetoEvolution({ settings: resolved, variation, seed, first, snapshot: restored?.algorithm === 'pareto-evolution' ? restored : undefined });
    case 'aging-evolution':
      return new AgingEvolution({ settings: resolved, variation, seed, first, snapshot: restored?.algorithm === 'aging-evolution' ? restored : undefined });
  }
}
