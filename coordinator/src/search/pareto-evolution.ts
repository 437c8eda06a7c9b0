import { InternalError, SEARCH_DECISION_VERSION, type Genome, type SearchDecision } from '@netbreeder/shared-types';
import { crowdedCompare, rankAndCrowding, type RankAndCrowding } from './nsga2.js';
import { assertObservation } from './observation.js';
import type { Observation, Proposal, SearchAlgorithm } from './search-algorithm.js';
import type { ResolvedSearchSettings } from './search-settings.js';
import { SEARCH_SNAPSHOT_VERSION, type ParetoEvolutionSnapshot, type ParetoMember } from './snapshot.js';
import { PopulationSearch } from './population-search.js';
import type { Variation } from './variation.js';
import { childProposal, shortHash, type FirstGenome } from './proposals.js';
import { frozenCopy } from './frozen-copy.js';
import { decisionMember, ignoredObservation } from './decisions.js';

export interface ParetoEvolutionOptions<G> {
  /** P, S, the initial members' mutation count and the size objective, already resolved. */
  settings: Pick<ResolvedSearchSettings, 'populationSize' | 'sampleSize' | 'initialMutations' | 'objective'>;
  /** How genomes are made, mutated and hashed. */
  variation: Variation<G>;
  /** Seeds the random source; ignored when restoring, where the snapshot's state rules. */
  seed: number;
  /** The genome of the first initial member (the run's reference network). @default none: every initial member is random */
  first?: FirstGenome<G>;
  /** A snapshot from {@link ParetoEvolution.snapshot} (already checked with `parseSearchSnapshot`). */
  snapshot?: ParetoEvolutionSnapshot<G>;
}

const objectives = (members: readonly ParetoMember<unknown>[]) => members.map((m) => [-m.fitness, m.cost]);

/**
 * Multi-objective evolution, asynchronous and steady-state, with the selection of NSGA-II (Deb et
 * al., IEEE TEC 2002): validation accuracy is maximised against `objective` (parameter count or
 * FLOPs per sample) minimised.
 *
 * - The first P proposals are initial members, as in aging evolution (a minimal genome with 0 to
 *   `initialMutations` random mutations each); more are proposed while no result has arrived.
 * - Otherwise S members are drawn uniformly with replacement and the best of them by the crowded
 *   comparison (lower non-domination rank, then larger crowding distance; the earliest drawn among
 *   equals) is the parent of a mutated child.
 * - Each observation joins the population; when it then holds more than P members, the worst by
 *   the crowded comparison leaves (the last front's most crowded member; the oldest among equals),
 *   which is NSGA-II's elitist survivor rule applied one child at a time.
 *
 * Observations must carry the objective (`params` or `flops`); observing draws no randomness.
 */
export class ParetoEvolution<G = Genome> extends PopulationSearch<G, ParetoMember<G>, ParetoEvolutionOptions<G>['settings']> implements SearchAlgorithm<G> {
  readonly name = 'pareto-evolution';

  constructor(options: ParetoEvolutionOptions<G>) {
    super(options, ['populationSize', 'sampleSize', 'initialMutations', 'objective']);
  }

  propose(): Proposal<G> {
    const { populationSize: P, sampleSize: S, objective } = this.settings;
    this.proposed++;
    if (this.initialProposed < P) return this.initialMember(`initial member ${this.initialProposed + 1} of ${P}`, 'initial');
    if (!this.population.length) return this.initialMember(`extra initial member: all ${P} initial members are out and no result has arrived yet`, 'extra-initial');

    const rc = rankAndCrowding(objectives(this.population));
    const drawn: number[] = [];
    let winner = -1;
    for (let i = 0; i < S; i++) {
      const k = this.rng.int(0, this.population.length - 1);
      drawn.push(k);
      if (winner < 0 || crowdedCompare(k, winner, rc) < 0) winner = k;
    }
    const parent = this.population[winner]!;
    const choice =
      `crowded tournament of ${S} draws with replacement from ${this.population.length} members (${new Set(drawn).size} distinct); ` +
      `the best drawn, ${shortHash(parent.genomeHash)} from evaluation ${parent.evaluationId} (fitness ${parent.fitness.toFixed(4)}, ` +
      `${objective} ${parent.cost}, front ${rc.rank[winner]}, crowding ${rc.distance[winner]!.toFixed(3)}), is the parent`;
    const member = (k: number) => decisionMember(this.population[k]!, { cost: this.population[k]!.cost, front: rc.rank[k]!, crowding: rc.distance[k]! });
    const selection: SearchDecision = {
      kind: 'parent-selected',
      version: SEARCH_DECISION_VERSION,
      reason: choice,
      method: 'crowded-tournament',
      populationSize: this.population.length,
      sampleSize: S,
      drawn: drawn.map(member),
      winner: member(winner),
    };
    return childProposal(this.variation, this.rng, parent, selection, (why, before) => this.initialMember(why, 'fallback', before));
  }

  observe(o: Observation<G>): SearchDecision[] {
    assertObservation(o, this.variation);
    const { objective, populationSize } = this.settings;
    const cost = o[objective];
    if (typeof cost !== 'number' || !Number.isFinite(cost) || cost < 0) {
      throw new InternalError(`observation ${o.evaluationId}: pareto-evolution minimises ${objective} and needs it as a finite number ≥ 0, got ${String(cost)}`);
    }
    if (this.population.some((m) => m.evaluationId === o.evaluationId)) {
      return [ignoredObservation(o, 'duplicate', `evaluation ${o.evaluationId} is already a member`)];
    }
    const joined = { evaluationId: o.evaluationId, genomeHash: o.genomeHash, genome: frozenCopy(o.genome), fitness: o.fitness, cost };
    this.population.push(joined);
    this.observed++;
    const decisions: SearchDecision[] = [
      {
        kind: 'member-added',
        version: SEARCH_DECISION_VERSION,
        reason: `${shortHash(o.genomeHash)} from evaluation ${o.evaluationId} (fitness ${o.fitness.toFixed(4)}, ${objective} ${cost}) joins the population`,
        member: decisionMember(joined, { cost }),
        size: this.population.length,
      },
    ];
    if (this.population.length > populationSize) {
      const rc = rankAndCrowding(objectives(this.population));
      const w = this.worst(rc);
      const [gone] = this.population.splice(w, 1);
      decisions.push({
        kind: 'member-removed',
        version: SEARCH_DECISION_VERSION,
        reason:
          `the population holds more than ${populationSize}: ${shortHash(gone!.genomeHash)} from evaluation ${gone!.evaluationId} (fitness ${gone!.fitness.toFixed(4)}, ${objective} ${gone!.cost}) ` +
          `ranks last by crowded comparison (front ${rc.rank[w]}, crowding ${rc.distance[w]!.toFixed(3)}) and leaves`,
        rule: 'crowded-worst',
        member: decisionMember(gone!, { cost: gone!.cost, front: rc.rank[w]!, crowding: rc.distance[w]! }),
      });
    }
    return decisions;
  }

  snapshot(): ParetoEvolutionSnapshot<G> {
    return { version: SEARCH_SNAPSHOT_VERSION, algorithm: 'pareto-evolution', ...this.state() };
  }

  /** The member the crowded comparison ranks last; the oldest among equals. */
  private worst(rc: RankAndCrowding): number {
    let worst = 0;
    for (let i = 1; i < this.population.length; i++) if (crowdedCompare(i, worst, rc) > 0) worst = i;
    return worst;
  }
}
