import { SEARCH_DECISION_VERSION, type Random, type SearchDecision } from '@netbreeder/shared-types';
import { MutationError } from './mutations.js';
import type { Proposal } from './search-algorithm.js';
import { describeMutations, randomGenome, type Variation } from './variation.js';

/** The first 12 hex digits of a genome hash, for reasons and logs. */
export const shortHash = (hash: string): string => hash.slice(0, 12);

/** Why a parentless genome was proposed (see the `random-genome` decision). */
export type RandomRole = Extract<SearchDecision, { kind: 'random-genome' }>['role'];

/**
 * A parentless proposal: a fresh genome (minimal, or of the hand-made family) with 0 to `maxMutations` random mutations. The random
 * draws are the same, in the same order, whichever algorithm asks. Its decisions: `before` (what
 * led here), then the `random-genome` decision.
 */
export function randomProposal<G>(variation: Variation<G>, rng: Random, maxMutations: number, why: string, role: RandomRole, before: SearchDecision[] = []): Proposal<G> {
  const { genome, origin, mutations, requested } = randomGenome(variation, rng, rng.int(0, maxMutations));
  const shortfall = mutations.length < requested ? ` (${requested} asked, the space allowed ${mutations.length})` : '';
  const reason = `${why}: ${origin} genome with ${mutations.length} random mutation(s)${shortfall}: ${describeMutations(mutations)}`;
  const hash = variation.hash(genome);
  return {
    genome,
    genomeHash: hash,
    parentHashes: [],
    mutation: null,
    reason,
    decisions: [
      ...before,
      { kind: 'random-genome', version: SEARCH_DECISION_VERSION, reason, role, genomeHash: hash, requested, mutations: mutations.map((m) => ({ operator: m.operator, detail: m.detail })) },
    ],
  };
}

/**
 * A genome every algorithm proposes as its first new configuration: the run's reference network
 * (see `fitReferenceNetwork`), which then joins the population like any other result.
 */
export interface FirstGenome<G> {
  genome: G;
  /** What it is, in one line. */
  description: string;
  /** How it was changed to fit the search space (empty: as written). */
  adjustments: readonly string[];
}

/** The proposal of the reference network, its decision saying so; `why`: its place in the algorithm (an initial member, a random sample). */
export function referenceProposal<G>(variation: Variation<G>, first: FirstGenome<G>, why: string): Proposal<G> {
  const hash = variation.hash(first.genome);
  const fitted = first.adjustments.length ? `, fitted to the search space: ${first.adjustments.join('; ')}` : '';
  const reason = `${why}: the reference network (${first.description})${fitted}`;
  return {
    genome: structuredClone(first.genome),
    genomeHash: hash,
    parentHashes: [],
    mutation: null,
    reason,
    decisions: [{ kind: 'reference-network', version: SEARCH_DECISION_VERSION, reason, genomeHash: hash, description: first.description, adjustments: [...first.adjustments] }],
  };
}

/**
 * A mutated child of `parent`, its reason starting with how the parent was chosen (the `selection`
 * decision, recorded first); when the parent has no valid mutation, `fallback` gives the proposal
 * instead, with the reason why and the decisions that led to it.
 */
export function childProposal<G>(
  variation: Variation<G>,
  rng: Random,
  parent: { genome: G; genomeHash: string },
  selection: SearchDecision,
  fallback: (why: string, before: SearchDecision[]) => Proposal<G>,
): Proposal<G> {
  const chosen = selection.reason;
  let child: ReturnType<Variation<G>['mutate']>;
  try {
    child = variation.mutate(parent.genome, rng, parent.genomeHash);
  } catch (err) {
    if (!(err instanceof MutationError)) throw err;
    const why = `${chosen}, but it has no valid mutation (${err.message}); a fresh member instead`;
    return fallback(why, [selection, { kind: 'mutation-impossible', version: SEARCH_DECISION_VERSION, reason: why, parentHash: parent.genomeHash, message: err.message }]);
  }
  const hash = child.genomeHash ?? variation.hash(child.genome);
  const reason = `${chosen}; ${child.mutation.operator}: ${child.mutation.detail}`;
  return {
    genome: child.genome,
    genomeHash: hash,
    parentHashes: [parent.genomeHash],
    mutation: child.mutation,
    reason,
    decisions: [
      selection,
      { kind: 'mutation', version: SEARCH_DECISION_VERSION, reason: `${child.mutation.operator}: ${child.mutation.detail}`, parentHash: parent.genomeHash, childHash: hash, operator: child.mutation.operator, detail: child.mutation.detail },
    ],
  };
}
