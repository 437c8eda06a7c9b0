import { genomeHash, genomeValidator, type DataShape, type Genome, type Random, type SearchSpace } from '@netbreeder/shared-types';
import { minimalGenome } from './minimal-genome.js';
import { freshGenome, type StartKind } from './family-genome.js';
import { mutate, MutationError, type MutateOptions, type Mutation } from './mutations.js';
import { RecentGenomes } from './recent-genomes.js';

/**
 * What a search algorithm needs to know about its genomes, and nothing more: how to make a fresh
 * one, how to mutate one, how to hash one. The algorithms are written against this, so the same
 * aging evolution or random search runs on networks ({@link genomeVariation}) or on any other
 * encoding (such as the bit-string toy problem a benchmark may use).
 */
export interface Variation<G> {
  /** A fresh, valid genome: the start of an initial member or a random-search sample. */
  minimal(rng: Random): G;
  /**
   * A valid child that differs from `parent`; throws {@link MutationError} when none is found.
   * May give the child's hash too, when it had to compute it anyway. `parentHash`, when the caller
   * knows it (a population member's), saves hashing the parent again.
   */
  mutate(parent: G, rng: Random, parentHash?: string): { genome: G; mutation: Mutation; genomeHash?: string };
  /**
   * A fresh genome and the name of where it came from (`family`, `minimal`), when the variation
   * has more than one start; without it, fresh genomes are `minimal(rng)`.
   */
  fresh?(rng: Random): { genome: G; origin: string };
  /** Content hash: equal genomes give equal hashes. */
  hash(genome: G): string;
  /** Same as `hash(genome) === hash`, faster for genomes this variation made (optional). */
  hasHash?(genome: G, hash: string): boolean;
  /** True when `value` has the genome's form (used on restored snapshots). */
  isGenome(value: unknown): value is G;
}

/** The network genomes of a run: fresh genomes from `start` (see {@link StartKind}), grown and changed by {@link mutate}. */
export function genomeVariation(space: SearchSpace, data: DataShape, options: MutateOptions = {}, start: StartKind = 'minimal'): Variation<Genome> {
  // Children it made, so their observations (read back from the store) need not be hashed again.
  const made = new RecentGenomes();
  return {
    minimal: (rng) => minimalGenome({ space, data, rng }),
    fresh: (rng) => freshGenome(start, { space, data, rng }),
    mutate: (parent, rng, parentHash) => {
      const { genome, mutation, genomeHash } = mutate(parent, { space, data, rng, ...options }, parentHash);
      made.remember(genomeHash, genome);
      return { genome, mutation, genomeHash };
    },
    hash: (genome) => genomeHash(genome),
    hasHash: (genome, hash) => made.madeWith(hash, genome) || genomeHash(genome) === hash,
    isGenome: (value): value is Genome => genomeValidator.check(value),
  };
}

export interface RandomGenome<G> {
  genome: G;
  /** Where the fresh genome came from before the mutations (`minimal`, `family`). */
  origin: string;
  /** The mutations applied to the minimal genome, in order. */
  mutations: Mutation[];
  /** How many were asked for; more than `mutations.length` when the space ran out of room. */
  requested: number;
}

/**
 * A fresh genome (see `Variation.fresh`) with `count` random mutations applied in turn. Stops early, keeping what it has,
 * when a mutation finds no valid child (a narrow space may leave no room to grow).
 */
export function randomGenome<G>(variation: Variation<G>, rng: Random, count: number): RandomGenome<G> {
  const fresh = variation.fresh ? variation.fresh(rng) : { genome: variation.minimal(rng), origin: 'minimal' };
  let genome = fresh.genome;
  const mutations: Mutation[] = [];
  for (let i = 0; i < count; i++) {
    try {
      const child = variation.mutate(genome, rng);
      genome = child.genome;
      mutations.push(child.mutation);
    } catch (err) {
      if (err instanceof MutationError) break;
      throw err;
    }
  }
  return { genome, origin: fresh.origin, mutations, requested: count };
}

/** `add-layer (added conv2d …); change-width (…)`, or `none`. */
export const describeMutations = (mutations: readonly Mutation[]): string =>
  mutations.length ? mutations.map((m) => `${m.operator} (${m.detail})`).join('; ') : 'none';
