import type { Random } from '@netbreeder/shared-types';
import { MutationError } from './mutations.js';
import type { Proposal } from './search-algorithm.js';
import { describeMutations, randomGenome, type Variation } from './variation.js';

/** The first 12 hex digits of a genome hash, for reasons and logs. */
export const shortHash = (hash: string): string => hash.slice(0, 12);

/**
 * A parentless proposal: the minimal genome with 0 to `maxMutations` random mutations. The random
 * draws are the same, in the same order, whichever algorithm asks.
 */
export function randomProposal<G>(variation: Variation<G>, rng: Random, maxMutations: number, why: string): Proposal<G> {
  const { genome, mutations, requested } = randomGenome(variation, rng, rng.int(0, maxMutations));
  const shortfall = mutations.length < requested ? ` (${requested} asked, the space allowed ${mutations.length})` : '';
  return {
    genome,
    genomeHash: variation.hash(genome),
    parentHashes: [],
    mutation: null,
    reason: `${why}: minimal genome with ${mutations.length} random mutation(s)${shortfall}: ${describeMutations(mutations)}`,
  };
}

/**
 * A mutated child of `parent`, its reason saying how the parent was `chosen`; when the parent has
 * no valid mutation, `fallback` gives the proposal instead (with the reason why).
 */
export function childProposal<G>(
  variation: Variation<G>,
  rng: Random,
  parent: { genome: G; genomeHash: string },
  chosen: string,
  fallback: (why: string) => Proposal<G>,
): Proposal<G> {
  let child: ReturnType<Variation<G>['mutate']>;
  try {
    child = variation.mutate(parent.genome, rng);
  } catch (err) {
    if (!(err instanceof MutationError)) throw err;
    return fallback(`${chosen}, but it has no valid mutation (${err.message}); a fresh member instead`);
  }
  return {
    genome: child.genome,
    genomeHash: child.genomeHash ?? variation.hash(child.genome),
    parentHashes: [parent.genomeHash],
    mutation: child.mutation,
    reason: `${chosen}; ${child.mutation.operator}: ${child.mutation.detail}`,
  };
}
