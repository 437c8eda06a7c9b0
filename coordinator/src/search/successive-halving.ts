import { SEARCH_DECISION_VERSION, type Genome, type SearchDecision } from '@netbreeder/shared-types';
import { AgingEvolution } from './aging-evolution.js';
import { rungBudgets } from './hyperband-brackets.js';
import { assertObservation } from './observation.js';
import { RandomSearch } from './random-search.js';
import type { Observation, Proposal, SearchAlgorithm } from './search-algorithm.js';
import type { ResolvedSearchSettings } from './search-settings.js';
import { SEARCH_SNAPSHOT_VERSION, SearchSnapshotError, type AshaRungMember, type AshaSnapshot } from './snapshot.js';
import type { Variation } from './variation.js';
import { shortHash, type FirstGenome } from './proposals.js';
import { frozenCopy, memberCopies, restoredMembers } from './frozen-copy.js';
import { decisionMember, ignoredObservation } from './decisions.js';

/** Where new configurations come from: independent random genomes, or children of aging evolution. */
export type AshaVariant = 'asha' | 'asha-evolution';

export interface SuccessiveHalvingOptions<G> {
  /** `asha`: new configurations are random-search samples; `asha-evolution`: children of aging evolution. */
  variant: AshaVariant;
  /** eta and the rung budgets, plus the settings of the configuration source, already resolved. */
  settings: Pick<ResolvedSearchSettings, 'eta' | 'minEpochs' | 'maxEpochs' | 'populationSize' | 'sampleSize' | 'initialMutations' | 'randomMutations'> &
    Partial<Pick<ResolvedSearchSettings, 'promoteReference' | 'parents'>>;
  /** How genomes are made, mutated and hashed. */
  variation: Variation<G>;
  /** Seeds the configuration source's random source; ignored when restoring. */
  seed: number;
  /** The first new configuration (the run's reference network), passed to the configuration source. @default none */
  first?: FirstGenome<G>;
  /** A snapshot from {@link SuccessiveHalving.snapshot} (already checked with `parseSearchSnapshot`). */
  snapshot?: AshaSnapshot<G>;
}


/**
 * Asynchronous successive halving (ASHA: Li, Jamieson, Rostamizadeh, Gonina, Ben-tzur, Hardt,
 * Recht, Talwalkar, MLSys 2020) over the training-epoch budget.
 *
 * - Rungs k = 0..K train for {@link rungBudgets}(minEpochs, maxEpochs, eta) epochs.
 * - `propose()` scans the rungs from the one below the top down to rung 0; in rung k it ranks the
 *   results by fitness (earlier result first among equals) and takes the first configuration in the
 *   top floor(|rung k| / eta) that was not promoted yet: the same genome is proposed again with the
 *   budget of rung k+1. Finding none, it proposes a new configuration at rung 0.
 * - No barrier: a promotion is decided whenever work is asked for, on the results present. A job
 *   that is lost never enters its rung; its configuration stays marked promoted and is not retried.
 * - A rung holds each genome once (by hash); a repeated result for it is ignored. A result whose
 *   `budgetEpochs` is no rung's budget (or absent) is counted in the snapshot's `offRung` and
 *   otherwise ignored: it is comparable with no rung.
 * - `promoteReference` (with a `first` genome, the run's reference network): that genome moves up
 *   a rung as soon as its result is in, whatever its rank (checked before the ranked promotions),
 *   so it reaches the top rung; the champion's choice then always has it at the longest budget.
 * - `asha-evolution`: new configurations are children from {@link AgingEvolution}, which sees the
 *   rung-0 results only, so its population ages by rung-0 arrivals; a child starts at rung 0, and
 *   only promoted ones get the full budget. Its tournaments compare the members' rung-0 fitness
 *   (`parents: 'first-rung'`), or (`'highest-rung'`) the highest rung each member's genome has
 *   reached first and its fitness there second, so a genome that kept its rank over longer trainings
 *   beats one that only learns fast.
 *
 * Its only random draws are the configuration source's, so the snapshot's random state is that
 * source's, and the same interleaving of propose and observe calls gives the same proposals.
 */
export class SuccessiveHalving<G = Genome> implements SearchAlgorithm<G> {
  readonly name: AshaVariant;
  /** Epochs of each rung, lowest first. */
  readonly budgets: readonly number[];
  private readonly settings: SuccessiveHalvingOptions<G>['settings'];
  private readonly variation: Variation<G>;
  private readonly seed: number;
  private readonly source: AgingEvolution<G> | RandomSearch<G>;
  private rungs: AshaRungMember<G>[][];
  private proposed: number;
  private observed: number;
  private promotions: number;
  private offRung: number;
  /** The reference network's hash when it climbs every rung (`promoteReference`), else null. */
  private readonly climbing: string | null;

  constructor(options: SuccessiveHalvingOptions<G>) {
    this.name = options.variant;
    this.settings = { ...options.settings };
    this.variation = options.variation;
    const { eta, minEpochs, maxEpochs } = this.settings;
    this.budgets = rungBudgets(minEpochs, maxEpochs, eta);
    const s = options.snapshot;
    if (s) {
      if (s.algorithm !== this.name) throw new SearchSnapshotError(`the snapshot belongs to '${s.algorithm}', not '${this.name}'`);
      for (const k of ['eta', 'minEpochs', 'maxEpochs'] as const) {
        if (s.settings[k] !== this.settings[k]) {
          throw new SearchSnapshotError(`the snapshot was taken with ${k} ${s.settings[k]}, not ${this.settings[k]}; resume with the run's original settings`);
        }
      }
      if (s.rungs.length !== this.budgets.length) throw new SearchSnapshotError(`the snapshot has ${s.rungs.length} rungs, these settings make ${this.budgets.length}`);
    }
    this.seed = s ? s.seed : options.seed;
    const seed = this.seed;
    if (this.name === 'asha') {
      const snap = s?.source.algorithm === 'random' ? s.source : undefined;
      if (s && !snap) throw new SearchSnapshotError(`an 'asha' snapshot must hold a 'random' configuration source, not '${s.source.algorithm}'`);
      this.source = new RandomSearch({ settings: this.settings, variation: this.variation, seed, first: options.first, snapshot: snap });
    } else {
      const snap = s?.source.algorithm === 'aging-evolution' ? s.source : undefined;
      if (s && !snap) throw new SearchSnapshotError(`an 'asha-evolution' snapshot must hold an 'aging-evolution' configuration source, not '${s.source.algorithm}'`);
      const standing = this.settings.parents === 'highest-rung' ? (m: { genomeHash: string; fitness: number }) => this.highestRung(m) : undefined;
      this.source = new AgingEvolution({ settings: this.settings, variation: this.variation, seed, first: options.first, snapshot: snap, standing });
    }
    this.rungs = s ? s.rungs.map(restoredMembers) : this.budgets.map(() => []);
    this.proposed = s ? s.proposed : 0;
    this.observed = s ? s.observed : 0;
    this.promotions = s ? s.promotions : 0;
    this.offRung = s ? s.offRung : 0;
    this.climbing = this.settings.promoteReference && options.first ? this.variation.hash(options.first.genome) : null;
  }

  propose(): Proposal<G> {
    this.proposed++;
    const { eta } = this.settings;
    const climb = this.referenceClimb();
    if (climb) return climb;
    const scanned: Extract<SearchDecision, { kind: 'no-promotion' }>['rungs'] = [];
    for (let k = this.budgets.length - 2; k >= 0; k--) {
      const rung = this.rungs[k]!;
      const quota = Math.floor(rung.length / eta);
      const order = rung.map((_, i) => i).sort((a, b) => rung[b]!.fitness - rung[a]!.fitness || a - b);
      const threshold = quota ? rung[order[quota - 1]!]!.fitness : null;
      scanned.push({ rung: k, epochs: this.budgets[k]!, size: rung.length, quota, promoted: rung.filter((m) => m.promoted).length, threshold });
      if (!quota) continue;
      for (let place = 0; place < quota; place++) {
        const m = rung[order[place]!]!;
        if (m.promoted) continue;
        const reason =
          `promotion from rung ${k} (${this.budgets[k]} epochs) to rung ${k + 1} (${this.budgets[k + 1]} epochs): ` +
          `${shortHash(m.genomeHash)} from evaluation ${m.evaluationId} (fitness ${m.fitness.toFixed(4)}) ranks ${place + 1} of ${rung.length}, ` +
          `in the top floor(${rung.length}/${eta}) = ${quota} not yet promoted`;
        return this.promote(m, k, reason, { kind: 'promotion', rank: place + 1, rungSize: rung.length, quota, threshold: threshold! });
      }
    }
    const fresh = this.source.propose();
    const none: SearchDecision = {
      kind: 'no-promotion',
      version: SEARCH_DECISION_VERSION,
      reason: `no rung below the top has a result in its top floor(n/${eta}) that is not promoted yet; a new configuration starts at rung 0 (${this.budgets[0]} epochs)`,
      rungs: scanned,
    };
    return { ...fresh, budgetEpochs: this.budgets[0]!, reason: `new configuration at rung 0 (${this.budgets[0]} epochs): ${fresh.reason}`, decisions: [none, ...(fresh.decisions ?? [])] };
  }

  /** The highest rung holding `m`'s genome and its fitness there (rung 0 and its own fitness when no rung holds it). */
  private highestRung(m: { genomeHash: string; fitness: number }): { rung: number; fitness: number } {
    for (let k = this.rungs.length - 1; k > 0; k--) {
      const there = this.rungs[k]!.find((r) => r.genomeHash === m.genomeHash);
      if (there) return { rung: k, fitness: there.fitness };
    }
    return { rung: 0, fitness: m.fitness };
  }

  /** The reference network's next rung, when it climbs and has a result not yet promoted below the top. */
  private referenceClimb(): Proposal<G> | null {
    if (this.climbing === null) return null;
    for (let k = this.budgets.length - 2; k >= 0; k--) {
      const m = this.rungs[k]!.find((r) => r.genomeHash === this.climbing && !r.promoted);
      if (!m) continue;
      const reason =
        `the reference network moves up from rung ${k} (${this.budgets[k]} epochs) to rung ${k + 1} (${this.budgets[k + 1]} epochs) whatever its rank ` +
        `(fitness ${m.fitness.toFixed(4)}), so the champion's choice has it at the longest training`;
      return this.promote(m, k, reason, { kind: 'reference-promotion' });
    }
    return null;
  }

  /** Marks `m` of rung `k` promoted and proposes its genome again at rung k+1, continuing from its result. */
  private promote(
    m: AshaRungMember<G>,
    k: number,
    reason: string,
    how: { kind: 'promotion'; rank: number; rungSize: number; quota: number; threshold: number } | { kind: 'reference-promotion' },
  ): Proposal<G> {
    m.promoted = true;
    this.promotions++;
    const moves: Omit<Extract<SearchDecision, { kind: 'reference-promotion' }>, 'kind'> = { version: SEARCH_DECISION_VERSION, reason, fromRung: k, toRung: k + 1, fromEpochs: this.budgets[k]!, toEpochs: this.budgets[k + 1]!, member: decisionMember(m) };
    return {
      genome: structuredClone(m.genome),
      genomeHash: m.genomeHash,
      parentHashes: [],
      mutation: null,
      budgetEpochs: this.budgets[k + 1]!,
      promotedFrom: m.evaluationId,
      reason,
      decisions: [{ ...how, ...moves }],
    };
  }

  observe(o: Observation<G>): SearchDecision[] {
    assertObservation(o, this.variation);
    const k = o.budgetEpochs === undefined ? -1 : this.budgets.indexOf(o.budgetEpochs);
    if (k < 0) {
      // Trained for no rung's budget (a genome a user submitted with its own epochs): comparable with
      // no rung, so it is counted and otherwise left out.
      this.offRung++;
      return [ignoredObservation(o, 'off-rung', `trained for ${o.budgetEpochs ?? 'its own'} epochs, no rung's budget (${this.budgets.join(', ')}); comparable with no rung`)];
    }
    // Evolution learns from equal-budget results only.
    const fromSource = k === 0 ? this.source.observe(o) : [];
    const rung = this.rungs[k]!;
    if (rung.some((m) => m.genomeHash === o.genomeHash)) return [...fromSource, ignoredObservation(o, 'duplicate', `rung ${k} already holds genome ${shortHash(o.genomeHash)}`)];
    const member = { evaluationId: o.evaluationId, genomeHash: o.genomeHash, genome: frozenCopy(o.genome), fitness: o.fitness, promoted: false };
    rung.push(member);
    this.observed++;
    return [
      ...fromSource,
      {
        kind: 'member-added',
        version: SEARCH_DECISION_VERSION,
        reason: `${shortHash(o.genomeHash)} from evaluation ${o.evaluationId} (fitness ${o.fitness.toFixed(4)}) enters rung ${k} (${this.budgets[k]} epochs)`,
        member: decisionMember(member),
        rung: k,
        size: rung.length,
      },
    ];
  }

  forget(drop: (evaluationId: string) => boolean): number {
    let removed = 0;
    this.rungs = this.rungs.map((rung) => {
      const kept = rung.filter((m) => !drop(m.evaluationId));
      removed += rung.length - kept.length;
      return kept;
    });
    if ('forget' in this.source) this.source.forget(drop);
    return removed;
  }

  /** Each rung's results in arrival order, lowest rung first (copies sharing the frozen genomes). */
  rungMembers(): AshaRungMember<G>[][] {
    return this.rungs.map(memberCopies);
  }

  snapshot(): AshaSnapshot<G> {
    const source = this.source.snapshot();
    return {
      version: SEARCH_SNAPSHOT_VERSION,
      algorithm: this.name,
      seed: this.seed,
      rng: source.rng,
      proposed: this.proposed,
      observed: this.observed,
      settings: { eta: this.settings.eta, minEpochs: this.settings.minEpochs, maxEpochs: this.settings.maxEpochs },
      promotions: this.promotions,
      offRung: this.offRung,
      rungs: this.rungs.map(memberCopies),
      source,
    };
  }
}
