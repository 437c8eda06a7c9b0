import { SEARCH_DECISION_VERSION, type Genome, type SearchDecision } from '@netbreeder/shared-types';
import { assertObservation } from './observation.js';
import type { Observation, Proposal, SearchAlgorithm } from './search-algorithm.js';
import type { ResolvedSearchSettings } from './search-settings.js';
import { SEARCH_SNAPSHOT_VERSION, type AgingEvolutionSnapshot } from './snapshot.js';
import { PopulationSearch } from './population-search.js';
import { frozenCopy } from './frozen-copy.js';
import { tournamentSelect } from './tournament.js';
import type { Variation } from './variation.js';
import { childProposal, shortHash, type FirstGenome } from './proposals.js';
import { decisionMember, ignoredObservation } from './decisions.js';

export interface AgingEvolutionOptions<G> {
  /** P, S and the initial members' mutation count, already resolved (see `resolveSearchSettings`). */
  settings: Pick<ResolvedSearchSettings, 'populationSize' | 'sampleSize' | 'initialMutations'>;
  /** How genomes are made, mutated and hashed. */
  variation: Variation<G>;
  /** Seeds the algorithm's random source; ignored when restoring, where the snapshot's state rules. */
  seed: number;
  /** The genome of the first initial member (the run's reference network). @default none: every initial member is random */
  first?: FirstGenome<G>;
  /** A snapshot from {@link AgingEvolution.snapshot} (already checked with `parseSearchSnapshot`). */
  snapshot?: AgingEvolutionSnapshot<G>;
  /**
   * Where a member stands beyond its own result (successive halving's `parents: 'highest-rung'`:
   * the highest rung its genome has reached and its fitness there). Tournaments then compare the
   * standing first. It is read at each tournament, so it draws nothing and needs no snapshot of its
   * own. @default none: tournaments compare the members' own fitness
   */
  standing?: (member: { genomeHash: string; fitness: number }) => { rung: number; fitness: number };
}

/**
 * Regularized (aging) evolution (Real, Aggarwal, Huang, Le, AAAI 2019, Algorithm 1), asynchronous:
 * there is no generation, a child is proposed whenever one is asked for.
 *
 * - The population is the observed members in arrival order, at most `populationSize` (P) of them.
 * - The first P proposals are initial members: a minimal genome with 0 to `initialMutations` random
 *   mutations each (so the first population differs in structure a little, not only in training
 *   genes). Asked for more before any result has arrived, it proposes further initial members.
 * - Otherwise it draws `sampleSize` (S) members uniformly with replacement; the fittest drawn is
 *   the parent and its mutated child is proposed. Should no valid mutation of the parent exist, a
 *   fresh initial member is proposed instead and the reason says so.
 * - Each observation is appended; when the population then exceeds P, the OLDEST member is
 *   removed, whatever its fitness (that is what makes the evolution "regularized").
 *
 * Every random draw comes from one seeded source, and observations draw nothing, so the same seed
 * and the same interleaving of propose and observe calls give the same proposals.
 */
export class AgingEvolution<G = Genome> extends PopulationSearch<G, Observation<G>, AgingEvolutionOptions<G>['settings']> implements SearchAlgorithm<G> {
  readonly name = 'aging-evolution';

  private readonly standing: AgingEvolutionOptions<G>['standing'];

  constructor(options: AgingEvolutionOptions<G>) {
    super(options, ['populationSize', 'sampleSize', 'initialMutations']);
    this.standing = options.standing;
  }

  propose(): Proposal<G> {
    const { populationSize: P, sampleSize: S } = this.settings;
    this.proposed++;
    if (this.initialProposed < P) return this.initialMember(`initial member ${this.initialProposed + 1} of ${P}`, 'initial');
    if (!this.population.length) return this.initialMember(`extra initial member: all ${P} initial members are out and no result has arrived yet`, 'extra-initial');

    const standings = this.standing ? this.population.map((m) => this.standing!(m)) : null;
    const { winner, drawn } = tournamentSelect(
      standings ? standings.map((s) => s.fitness) : this.population.map((m) => m.fitness),
      S,
      this.rng,
      standings?.map((s) => s.rung),
    );
    const parent = this.population[winner]!;
    const where = standings ? `, ranked by the highest rung each reached and the fitness there; it reached rung ${standings[winner]!.rung} with ${standings[winner]!.fitness.toFixed(4)}` : '';
    const choice =
      `tournament of ${S} draws with replacement from ${this.population.length} members ` +
      `(${new Set(drawn).size} distinct); the fittest drawn, ${shortHash(parent.genomeHash)} from evaluation ${parent.evaluationId} ` +
      `(fitness ${parent.fitness.toFixed(4)}${where}), is the parent`;
    const selection: SearchDecision = {
      kind: 'parent-selected',
      version: SEARCH_DECISION_VERSION,
      reason: choice,
      method: 'tournament',
      populationSize: this.population.length,
      sampleSize: S,
      drawn: drawn.map((k) => decisionMember(this.population[k]!)),
      winner: decisionMember(parent),
    };
    return childProposal(this.variation, this.rng, parent, selection, (why, before) => this.initialMember(why, 'fallback', before));
  }

  observe(o: Observation<G>): SearchDecision[] {
    assertObservation(o, this.variation);
    // A result delivered twice is counted once while its member lives (the store dedupes by id too).
    if (this.population.some((m) => m.evaluationId === o.evaluationId)) {
      return [ignoredObservation(o, 'duplicate', `evaluation ${o.evaluationId} is already a member`)];
    }
    const member = { evaluationId: o.evaluationId, genomeHash: o.genomeHash, genome: frozenCopy(o.genome), fitness: o.fitness };
    this.population.push(member);
    this.observed++;
    const decisions: SearchDecision[] = [
      {
        kind: 'member-added',
        version: SEARCH_DECISION_VERSION,
        reason: `${shortHash(o.genomeHash)} from evaluation ${o.evaluationId} (fitness ${o.fitness.toFixed(4)}) joins the population as its youngest member`,
        member: decisionMember(member),
        size: this.population.length,
      },
    ];
    if (this.population.length > this.settings.populationSize) {
      const oldest = this.population.shift()!; // the oldest, not the worst
      decisions.push({
        kind: 'member-removed',
        version: SEARCH_DECISION_VERSION,
        reason: `the population holds more than ${this.settings.populationSize}: its oldest member, ${shortHash(oldest.genomeHash)} from evaluation ${oldest.evaluationId} (fitness ${oldest.fitness.toFixed(4)}), ages out whatever its fitness`,
        rule: 'oldest',
        member: decisionMember(oldest),
      });
    }
    return decisions;
  }

  snapshot(): AgingEvolutionSnapshot<G> {
    return { version: SEARCH_SNAPSHOT_VERSION, algorithm: 'aging-evolution', ...this.state() };
  }
}
