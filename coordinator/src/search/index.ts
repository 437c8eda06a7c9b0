/**
 * The search: pure, seeded logic that proposes genomes to train and learns from their results.
 * No I/O, no clock; every random draw comes from a seeded `Random` whose state is in the snapshot.
 */
export {
  createSearchAlgorithm,
  SEARCH_ALGORITHM_NAMES,
  type Observation,
  type Proposal,
  type SearchAlgorithm,
  type SearchContext,
} from './search-algorithm.js';
export { resolveSearchSettings, SEARCH_SETTING_DEFAULTS, type ResolvedSearchSettings, type SearchSettings } from './search-settings.js';
export {
  parseSearchSnapshot,
  SEARCH_SNAPSHOT_VERSION,
  SearchSnapshotError,
  type AgingEvolutionSnapshot,
  type RandomSearchSnapshot,
  type SearchSnapshot,
} from './snapshot.js';
export { AgingEvolution, type AgingEvolutionOptions } from './aging-evolution.js';
export { RandomSearch, type RandomSearchOptions } from './random-search.js';
export { tournamentSelect, type TournamentResult } from './tournament.js';
export { describeMutations, genomeVariation, randomGenome, type RandomGenome, type Variation } from './variation.js';
export { minimalGenome, MinimalGenomeError, randomTrainingGenes, type GenomeContext } from './minimal-genome.js';
export {
  DEFAULT_MUTATION_WEIGHTS,
  mutate,
  MUTATION_OPERATORS,
  MutationError,
  type MutateContext,
  type MutateOptions,
  type Mutation,
  type MutationOperator,
  type MutationOperatorName,
  type MutationOutcome,
  type MutationResult,
} from './mutations.js';
export { ADD_LAYER_KIND_WEIGHTS, describeNode } from './layer-mutations.js';
