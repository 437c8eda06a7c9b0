import { createRandom, restoreRandom, type Random, type RandomState, type SearchDecision } from '@netbreeder/shared-types';
import type { Proposal } from './search-algorithm.js';
import type { ResolvedSearchSettings } from './search-settings.js';
import { SearchSnapshotError } from './snapshot.js';
import type { Variation } from './variation.js';
import { randomProposal, referenceProposal, type FirstGenome, type RandomRole } from './proposals.js';
import { memberCopies, restoredMembers } from './frozen-copy.js';

type PopulationSettings = Pick<ResolvedSearchSettings, 'populationSize' | 'sampleSize' | 'initialMutations'>;

/** The state both evolutions keep in their snapshots beside `version` and `algorithm`. */
export interface PopulationState<M, S> {
  seed: number;
  rng: RandomState;
  proposed: number;
  observed: number;
  settings: S;
  initialProposed: number;
  population: M[];
}

/**
 * What aging evolution and multi-objective evolution share: one seeded random source, a
 * population of observed members (oldest first), the counters, initial members made from the
 * minimal genome, forgetting members, and restoring all of it from a snapshot taken with the same
 * settings.
 */
export abstract class PopulationSearch<G, M extends { evaluationId: string; genome: G }, S extends PopulationSettings> {
  protected readonly settings: S;
  protected readonly variation: Variation<G>;
  protected readonly seed: number;
  protected readonly rng: Random;
  protected population: M[];
  protected proposed: number;
  protected initialProposed: number;
  protected observed: number;
  /** The genome of the first initial member (the run's reference network), if any. */
  protected readonly first: FirstGenome<G> | undefined;

  /** `mustMatch`: the settings a snapshot must have been taken with to be resumed. */
  protected constructor(
    options: { settings: S; variation: Variation<G>; seed: number; first?: FirstGenome<G>; snapshot?: PopulationState<M, S> },
    mustMatch: readonly (keyof S & string)[],
  ) {
    this.settings = { ...options.settings };
    this.first = options.first;
    this.variation = options.variation;
    const s = options.snapshot;
    for (const k of s ? mustMatch : []) {
      if (s!.settings[k] !== this.settings[k]) {
        throw new SearchSnapshotError(`the snapshot was taken with ${k} ${String(s!.settings[k])}, not ${String(this.settings[k])}; resume with the run's original settings`);
      }
    }
    this.seed = s ? s.seed : options.seed;
    this.rng = s ? restoreRandom(s.rng) : createRandom(options.seed);
    this.population = s ? restoredMembers(s.population) : [];
    this.proposed = s ? s.proposed : 0;
    this.initialProposed = s ? s.initialProposed : 0;
    this.observed = s ? s.observed : 0;
  }

  /** Removes every member whose evaluation `drop` names (the results of a quarantined worker); returns how many. */
  forget(drop: (evaluationId: string) => boolean): number {
    const before = this.population.length;
    this.population = this.population.filter((m) => !drop(m.evaluationId));
    return before - this.population.length;
  }

  /** The living members, oldest first (copies sharing the frozen genomes). */
  members(): M[] {
    return memberCopies(this.population);
  }

  /** Everything a snapshot holds but its version and algorithm name (copies sharing the frozen genomes). */
  protected state(): PopulationState<M, S> {
    return {
      seed: this.seed,
      rng: this.rng.state(),
      proposed: this.proposed,
      observed: this.observed,
      settings: { ...this.settings },
      initialProposed: this.initialProposed,
      population: memberCopies(this.population),
    };
  }

  /**
   * A fresh member: the first genome (the reference network) for the very first initial member when
   * there is one (it draws nothing), else the minimal genome with up to `initialMutations` random
   * mutations. A restored snapshot counts its initial members, so the first genome is proposed once.
   */
  protected initialMember(why: string, role: RandomRole, before: SearchDecision[] = []): Proposal<G> {
    this.initialProposed++;
    if (this.first && this.initialProposed === 1 && role === 'initial') return referenceProposal(this.variation, this.first, why);
    return randomProposal(this.variation, this.rng, this.settings.initialMutations, why, role, before);
  }
}
