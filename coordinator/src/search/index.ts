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
export {
  resolveSearchSettings,
  SEARCH_SETTING_DEFAULTS,
  SIZE_OBJECTIVES,
  type ResolvedSearchSettings,
  type SearchSettings,
  type SizeObjective,
} from './search-settings.js';
export {
  parseSearchSnapshot,
  SEARCH_SNAPSHOT_VERSION,
  SearchSnapshotError,
  type AgingEvolutionSnapshot,
  type AshaRungMember,
  type AshaSnapshot,
  type ParetoEvolutionSnapshot,
  type ParetoMember,
  type RandomSearchSnapshot,
  type SearchSnapshot,
} from './snapshot.js';
export { AgingEvolution, type AgingEvolutionOptions } from './aging-evolution.js';
export { RandomSearch, type RandomSearchOptions } from './random-search.js';
export { SuccessiveHalving, type AshaVariant, type SuccessiveHalvingOptions } from './successive-halving.js';
export { rungEpochsFor, describeSearchMethod, LOWEST_RUNG_SAMPLES, type RungEpochs } from './rung-epochs.js';
export { hyperbandBrackets, rungBudgets, type HalvingRound, type HyperbandBracket } from './hyperband-brackets.js';
export { ParetoEvolution, type ParetoEvolutionOptions } from './pareto-evolution.js';
export {
  crowdedCompare,
  crowdingDistance,
  dominates,
  hypervolume2d,
  nonDominatedSort,
  paretoFront,
  rankAndCrowding,
  selectSurvivors,
  type ObjectiveVector,
  type RankAndCrowding,
} from './nsga2.js';
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
export { referenceProposal, type FirstGenome } from './proposals.js';
export { forgetResults, replaySearch, type RecordedCall, type ReplayDisagreement, type ReplayInput, type ReplayReport } from './replay.js';
