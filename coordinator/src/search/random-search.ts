import { createRandom, restoreRandom, type Genome, type Random, type SearchDecision } from '@netbreeder/shared-types';
import { assertObservation } from './observation.js';
import type { Observation, Proposal, SearchAlgorithm } from './search-algorithm.js';
import type { ResolvedSearchSettings } from './search-settings.js';
import { SEARCH_SNAPSHOT_VERSION, SearchSnapshotError, type RandomSearchSnapshot } from './snapshot.js';
import type { Variation } from './variation.js';
import { randomProposal, referenceProposal, type FirstGenome } from './proposals.js';
import { ignoredObservation } from './decisions.js';

export interface RandomSearchOptions<G> {
  /** The most random mutations per sample, already resolved (see `resolveSearchSettings`). */
  settings: Pick<ResolvedSearchSettings, 'randomMutations'>;
  /** How genomes are made, mutated and hashed. */
  variation: Variation<G>;
  /** Seeds the random source; ignored when restoring, where the snapshot's state rules. */
  seed: number;
  /** The first sample (the run's reference network). @default none: every sample is random */
  first?: FirstGenome<G>;
  /** A snapshot from {@link RandomSearch.snapshot} (already checked with `parseSearchSnapshot`). */
  snapshot?: RandomSearchSnapshot;
}

/**
 * The honest baseline: every proposal (but the first genome, when given) is an independent random genome, a minimal genome with a
 * number of random mutations drawn uniformly from 0 to `randomMutations`, so it reaches the same
 * kinds of networks evolution can build, by the same operators, without selection. Observations
 * are counted and otherwise change nothing.
 */
export class RandomSearch<G = Genome> implements SearchAlgorithm<G> {
  readonly name = 'random';
  private readonly settings: RandomSearchOptions<G>['settings'];
  private readonly variation: Variation<G>;
  private readonly seed: number;
  private readonly rng: Random;
  private readonly first: FirstGenome<G> | undefined;
  private proposed: number;
  private observed: number;

  constructor(options: RandomSearchOptions<G>) {
    this.settings = { ...options.settings };
    this.variation = options.variation;
    this.first = options.first;
    const s = options.snapshot;
    if (s && s.settings.randomMutations !== this.settings.randomMutations) {
      throw new SearchSnapshotError(
        `the snapshot was taken with randomMutations ${s.settings.randomMutations}, not ${this.settings.randomMutations}; resume with the run's original settings`,
      );
    }
    this.seed = s ? s.seed : options.seed;
    this.rng = s ? restoreRandom(s.rng) : createRandom(options.seed);
    this.proposed = s ? s.proposed : 0;
    this.observed = s ? s.observed : 0;
  }

  propose(): Proposal<G> {
    this.proposed++;
    if (this.first && this.proposed === 1) return referenceProposal(this.variation, this.first, 'random sample 1');
    return randomProposal(this.variation, this.rng, this.settings.randomMutations, `random sample ${this.proposed}`, 'random-sample');
  }

  observe(o: Observation<G>): SearchDecision[] {
    assertObservation(o, this.variation);
    this.observed++;
    return [ignoredObservation(o, 'counted-only', 'random search counts results and learns nothing from them')];
  }

  snapshot(): RandomSearchSnapshot {
    return {
      version: SEARCH_SNAPSHOT_VERSION,
      algorithm: 'random',
      seed: this.seed,
      rng: this.rng.state(),
      proposed: this.proposed,
      observed: this.observed,
      settings: { ...this.settings },
    };
  }
}
