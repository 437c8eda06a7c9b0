import { describe, expect, it } from 'vitest';
import { checkGenome, createRandom, defaultSearchSpace, fitReferenceNetwork, genomeHash, searchDecisionValidator } from '@netbreeder/shared-types';
import { SuccessiveHalving, type AshaVariant } from './successive-halving.js';
import type { Observation, Proposal } from './search-algorithm.js';
import { genomeVariation } from './variation.js';
import { IMAGE } from './test-fixtures.js';

const space = defaultSearchSpace();
const variation = genomeVariation(space, IMAGE);
const asha = (variant: AshaVariant = 'asha', eta = 3, minEpochs = 1, maxEpochs = 9, seed = 1) =>
  new SuccessiveHalving({
    variant,
    settings: { eta, minEpochs, maxEpochs, populationSize: 4, sampleSize: 2, initialMutations: 2, randomMutations: 6 },
    variation,
    seed,
  });

let nextId = 0;
const result = (p: Proposal, fitness: number, budgetEpochs = p.budgetEpochs): Observation => ({
  evaluationId: `e${nextId++}`,
  genomeHash: p.genomeHash,
  genome: p.genome,
  fitness,
  budgetEpochs,
});

/** Proposes new configurations, all before any result, then reports them with the given fitness values. */
const batchRungZero = (alg: SuccessiveHalving, fitness: number[]): Proposal[] => {
  const ps = fitness.map(() => alg.propose());
  ps.forEach((p, i) => {
    expect(p.budgetEpochs).toBe(1);
    alg.observe(result(p, fitness[i]!));
  });
  return ps;
};

/** Proposes n new configurations one at a time, each reported before the next. */
const fillRungZero = (alg: SuccessiveHalving, fitness: number[]): Proposal[] =>
  fitness.map((f) => {
    const p = alg.propose();
    expect(p.budgetEpochs).toBe(1);
    alg.observe(result(p, f));
    return p;
  });

describe('SuccessiveHalving (asha)', () => {
  it('has rungs minEpochs·eta^k up to maxEpochs and starts every new configuration at rung 0', () => {
    const alg = asha('asha', 3, 1, 20);
    expect(alg.budgets).toEqual([1, 3, 9, 20]);
    const ps = Array.from({ length: 5 }, () => alg.propose()); // nothing observed: no promotion possible
    for (const p of ps) {
      expect(p.budgetEpochs).toBe(1);
      expect(p.reason).toMatch(/^new configuration at rung 0 \(1 epochs\): random sample \d+: minimal genome/);
      expect(checkGenome(p.genome, space, IMAGE).ok).toBe(true);
      expect(p.parentHashes).toEqual([]);
    }
  });

  it('promotes the best of rung 0 once it holds eta results: floor(|rung|/eta) places', () => {
    // The ASHA promotion rule (Li et al., MLSys 2020, as recorded in /work/shared/REFERENCES.md): a
    // configuration in the top floor(|rung k|/eta) of rung k, not yet promoted, goes to rung k+1.
    const alg = asha();
    const ps = fillRungZero(alg, [0.3, 0.6]);
    expect(alg.propose().reason).toMatch(/^new configuration/); // floor(2/3) = 0 places (this one is lost)
    ps.push(...fillRungZero(alg, [0.5]));
    const up = alg.propose(); // floor(3/3) = 1: the best, 0.6
    expect(up.genomeHash).toBe(ps[1]!.genomeHash);
    expect(up.genome).toEqual(ps[1]!.genome);
    expect(up.budgetEpochs).toBe(3);
    expect(up.parentHashes).toEqual([]);
    expect(up.mutation).toBeNull();
    expect(up.reason).toBe(
      `promotion from rung 0 (1 epochs) to rung 1 (3 epochs): ${ps[1]!.genomeHash.slice(0, 12)} from evaluation e1 (fitness 0.6000) ranks 1 of 3, in the top floor(3/3) = 1 not yet promoted`,
    );
    expect(alg.propose().reason).toMatch(/^new configuration/); // the one place is used
    ps.push(...fillRungZero(alg, [0.1, 0.55])); // 5 results: floor(5/3) = 1 still
    expect(alg.propose().reason).toMatch(/^new configuration/);
    ps.push(...fillRungZero(alg, [0.2])); // 6 results: 2 places; the second best is 0.55
    const second = alg.propose();
    expect(second.genomeHash).toBe(ps[4]!.genomeHash);
    expect(second.reason).toContain('ranks 2 of 6, in the top floor(6/3) = 2');
  });

  it('scans from the top rung down: a promotion from rung 1 comes before one from rung 0', () => {
    const alg = asha('asha', 2); // eta 2: rungs 1, 2, 4, 8, 9
    expect(alg.budgets).toEqual([1, 2, 4, 8, 9]);
    const ps = batchRungZero(alg, [0.1, 0.9, 0.8, 0.2]); // 2 places in rung 0
    const a = alg.propose();
    const b = alg.propose();
    expect([a.genomeHash, b.genomeHash]).toEqual([ps[1]!.genomeHash, ps[2]!.genomeHash]);
    const c = alg.propose(); // no place is open: two new configurations
    const d = alg.propose();
    expect([c.budgetEpochs, d.budgetEpochs]).toEqual([1, 1]);
    alg.observe(result(a, 0.91));
    alg.observe(result(b, 0.85));
    alg.observe(result(c, 0.95)); // rung 0 has 6 results: a third place, for 0.95
    alg.observe(result(d, 0.05));
    const next = alg.propose(); // rung 1 has 2 results: one place, taken before rung 0's
    expect(next.genomeHash).toBe(a.genomeHash);
    expect(next.budgetEpochs).toBe(4);
    expect(next.reason).toMatch(/^promotion from rung 1 \(2 epochs\) to rung 2 \(4 epochs\)/);
    expect(alg.propose().reason).toMatch(/^promotion from rung 0/);
  });

  it('has no barrier: a lost promotion never enters its rung and is not proposed again', () => {
    const alg = asha();
    const ps = fillRungZero(alg, [0.9, 0.1, 0.2]);
    const lost = alg.propose();
    expect(lost.genomeHash).toBe(ps[0]!.genomeHash); // its worker vanishes: never observed
    fillRungZero(alg, [0.3, 0.4]);
    expect(alg.propose().reason).toMatch(/^new configuration/); // 5 results, 1 place, already used
    fillRungZero(alg, [0.5]);
    const next = alg.propose();
    expect(next.genomeHash).not.toBe(ps[0]!.genomeHash);
    expect(next.reason).toContain('ranks 2 of 6');
    expect(alg.rungMembers()[1]).toEqual([]);
  });

  it('never promotes out of the top rung', () => {
    const alg = asha('asha', 3, 1, 3); // rungs 1, 3
    const ps = fillRungZero(alg, [0.5, 0.6, 0.7]);
    const up = alg.propose();
    alg.observe(result(up, 0.8));
    expect(alg.rungMembers()[1]!.map((m) => m.genomeHash)).toEqual([ps[2]!.genomeHash]);
    for (let i = 0; i < 3; i++) expect(alg.propose().reason).toMatch(/^new configuration/);
  });

  it('over a long run with results in random order, every proposal follows the published rule', () => {
    // The ASHA rule (Li et al., MLSys 2020, as recorded in /work/shared/REFERENCES.md), restated here
    // from the rung contents alone: scan rungs from the top down; in rung k, the best not-yet-promoted
    // configuration among the top floor(|rung k|/eta) goes up; otherwise a new configuration starts.
    const eta = 3;
    const alg = asha('asha', eta, 1, 27, 5);
    const rng = createRandom('sequential');
    const pending: Proposal[] = [];
    let promotions = 0;
    for (let step = 0; step < 400; step++) {
      const rungs = alg.rungMembers();
      let expected: { hash: string; budget: number } | null = null;
      for (let k = rungs.length - 2; k >= 0 && !expected; k--) {
        const top = rungs[k]!.map((m, i) => ({ m, i })).sort((x, y) => y.m.fitness - x.m.fitness || x.i - y.i).slice(0, Math.floor(rungs[k]!.length / eta));
        const first = top.find(({ m }) => !m.promoted);
        if (first) expected = { hash: first.m.genomeHash, budget: alg.budgets[k + 1]! };
      }
      const p = alg.propose();
      if (expected) {
        promotions++;
        expect({ hash: p.genomeHash, budget: p.budgetEpochs }).toEqual(expected);
      } else {
        expect(p.budgetEpochs).toBe(1);
        expect(p.reason).toMatch(/^new configuration/);
      }
      pending.push(p);
      while (pending.length > 3 || (pending.length && rng.chance(0.45))) {
        const [done] = pending.splice(rng.int(0, pending.length - 1), 1);
        if (rng.chance(0.05)) continue; // a vanished worker: the result never arrives
        alg.observe(result(done!, Math.round(rng.next() * 1000) / 1000));
      }
    }
    const sizes = alg.rungMembers().map((r) => r.length);
    expect(promotions).toBeGreaterThan(100);
    expect(sizes[0]).toBeGreaterThan(200);
    for (let k = 1; k < sizes.length; k++) expect(sizes[k]).toBeLessThan(sizes[k - 1]! / 2); // each rung much smaller than the one below
    expect(sizes[3]).toBeGreaterThan(0); // something reached 27 epochs
  });

  it('holds a genome once per rung and leaves out results of no rung budget', () => {
    const alg = asha();
    const p = alg.propose();
    const o = result(p, 0.5);
    alg.observe(o);
    alg.observe(o);
    alg.observe({ ...o, evaluationId: 'other' });
    expect(alg.rungMembers()[0]).toHaveLength(1);
    const q = alg.propose();
    alg.observe({ ...result(q, 0.9), budgetEpochs: undefined });
    alg.observe({ ...result(q, 0.9), budgetEpochs: 4 }); // say a genome a user submitted with 4 epochs
    expect(alg.rungMembers().map((r) => r.length)).toEqual([1, 0, 0]);
    expect(alg.snapshot().offRung).toBe(2);
    expect(alg.snapshot().observed).toBe(1);
  });
});

describe('SuccessiveHalving (asha-evolution)', () => {
  it('new configurations are children of aging evolution at rung 0; evolution sees rung-0 results only', () => {
    const alg = asha('asha-evolution');
    const initial = batchRungZero(alg, [0.2, 0.4, 0.6, 0.3]); // P = 4 initial members
    expect(initial.every((p) => p.reason.includes('initial member'))).toBe(true);
    const up = alg.propose();
    expect(up.budgetEpochs).toBe(3);
    alg.observe(result(up, 0.99));
    const child = alg.propose();
    expect(child.budgetEpochs).toBe(1);
    expect(child.parentHashes).toHaveLength(1);
    expect(child.mutation).not.toBeNull();
    expect(child.reason).toMatch(/^new configuration at rung 0 \(1 epochs\): tournament of 2 draws/);
    const s = alg.snapshot();
    if (s.source.algorithm !== 'aging-evolution') throw new Error('expected aging evolution inside');
    expect(s.source.population.map((m) => m.fitness)).toEqual([0.2, 0.4, 0.6, 0.3]); // not the 0.99 at 3 epochs
    expect(s.rng).toEqual(s.source.rng);
  });

  it('only promoted configurations get the full budget', () => {
    const alg = asha('asha-evolution', 3, 1, 9, 3);
    const rng = createRandom('budget');
    const full = new Set<string>();
    const seenAtRung0 = new Set<string>();
    for (let i = 0; i < 150; i++) {
      const p = alg.propose();
      if (p.budgetEpochs === 1) seenAtRung0.add(p.genomeHash);
      else expect(seenAtRung0.has(p.genomeHash)).toBe(true); // promoted, never started high
      if (p.budgetEpochs === 9) full.add(p.genomeHash);
      alg.observe(result(p, rng.next()));
    }
    expect(full.size).toBeGreaterThan(0);
    expect(full.size).toBeLessThan(seenAtRung0.size / 3);
  });
});

describe('asha-evolution ranks parents by the highest rung reached (parents: highest-rung)', () => {
  const ranked = (parents: 'first-rung' | 'highest-rung') =>
    new SuccessiveHalving({
      variant: 'asha-evolution',
      // 40 draws from 4 members: every member is drawn (all but surely), so the ranking alone decides.
      settings: { eta: 3, minEpochs: 1, maxEpochs: 9, populationSize: 4, sampleSize: 40, initialMutations: 2, randomMutations: 6, parents },
      variation,
      seed: 4,
    });
  /** Four rung-0 results, the best promoted, then the weakest genome's result at rung 1 arrives (a worker that trained it for 3 epochs). */
  const parentOf = (parents: 'first-rung' | 'highest-rung') => {
    const alg = ranked(parents);
    const ps = batchRungZero(alg, [0.2, 0.4, 0.6, 0.3]);
    const up = alg.propose();
    expect(up.genomeHash).toBe(ps[2]!.genomeHash); // the promotion itself follows rung 0's ranking either way
    alg.observe(result(ps[0]!, 0.5, 3)); // genome 0 now stands at rung 1
    const child = alg.propose();
    expect(child.budgetEpochs).toBe(1);
    return { child, ps };
  };

  it('a member whose genome reached a higher rung wins the tournament over a fitter rung-0 member', () => {
    const { child, ps } = parentOf('highest-rung');
    expect(child.parentHashes).toEqual([ps[0]!.genomeHash]);
    expect(child.reason).toContain('ranked by the highest rung each reached and the fitness there; it reached rung 1 with 0.5000');
    const again = parentOf('highest-rung'); // the ranking draws nothing of its own: same seed, same child
    expect(again.child.genome).toEqual(child.genome);
  });

  it('first-rung (and a run stored before the setting) ranks by the rung-0 fitness alone', () => {
    const { child, ps } = parentOf('first-rung');
    expect(child.parentHashes).toEqual([ps[2]!.genomeHash]);
    expect(child.reason).not.toContain('highest rung');
  });

  it('among members at the same rung, the fitness there decides', () => {
    const alg = ranked('highest-rung');
    const ps = batchRungZero(alg, [0.2, 0.4, 0.6, 0.3]);
    alg.propose(); // the promotion of genome 2
    alg.observe(result(ps[2]!, 0.7, 3));
    alg.observe(result(ps[0]!, 0.8, 3));
    expect(alg.propose().parentHashes).toEqual([ps[0]!.genomeHash]);
  });
});

describe('genomes of another encoding', () => {
  it('works on any Variation (bit strings)', () => {
    const bits = {
      minimal: (r: ReturnType<typeof createRandom>) => Array.from({ length: 8 }, () => (r.chance(0.5) ? 1 : 0)),
      mutate: (g: number[], r: ReturnType<typeof createRandom>) => {
        const i = r.int(0, 7);
        return { genome: g.map((b, j) => (j === i ? 1 - b : b)), mutation: { operator: 'flip-bit', detail: `bit ${i}` } };
      },
      hash: (g: number[]) => g.join(''),
      isGenome: (v: unknown): v is number[] => Array.isArray(v),
    };
    const alg = new SuccessiveHalving<number[]>({
      variant: 'asha',
      settings: { eta: 3, minEpochs: 1, maxEpochs: 3, populationSize: 4, sampleSize: 2, initialMutations: 0, randomMutations: 0 },
      variation: bits,
      seed: 2,
    });
    for (let i = 0; i < 12; i++) {
      const p = alg.propose();
      alg.observe({ evaluationId: `b${i}`, genomeHash: p.genomeHash, genome: p.genome, fitness: p.genome.reduce((a, b) => a + b, 0) / 8, budgetEpochs: p.budgetEpochs });
    }
    expect(alg.rungMembers()[1]!.length).toBeGreaterThan(0);
  });
});

describe('successive halving records why it promotes or does not', () => {
  it('names the rank, the quota and the threshold of a promotion, then each rung it scanned when none is due (hand-computed, eta 3)', () => {
    const alg = asha('asha', 3, 1, 9);
    const ps = batchRungZero(alg, [0.2, 0.9, 0.5]);
    const promotion = alg.propose();
    expect(promotion.genomeHash).toBe(ps[1]!.genomeHash);
    // rung 0 holds 3 results: quota floor(3/3) = 1, so only the best (0.9) may move up
    expect(promotion.decisions).toEqual([
      expect.objectContaining({ kind: 'promotion', fromRung: 0, toRung: 1, fromEpochs: 1, toEpochs: 3, rank: 1, rungSize: 3, quota: 1, threshold: 0.9, member: expect.objectContaining({ fitness: 0.9 }) }),
    ]);
    const fresh = alg.propose();
    expect(fresh.budgetEpochs).toBe(1);
    expect(fresh.decisions![0]).toMatchObject({
      kind: 'no-promotion',
      rungs: [
        { rung: 1, epochs: 3, size: 0, quota: 0, promoted: 0, threshold: null },
        { rung: 0, epochs: 1, size: 3, quota: 1, promoted: 1, threshold: 0.9 },
      ],
    });
    expect(fresh.decisions![1]).toMatchObject({ kind: 'random-genome', role: 'random-sample' });
    // its result enters rung 1; one off every rung is counted and left out
    expect(alg.observe(result(promotion, 0.95))).toEqual([expect.objectContaining({ kind: 'member-added', rung: 1, size: 1 })]);
    expect(alg.observe(result(fresh, 0.4, 7))).toEqual([expect.objectContaining({ kind: 'observation-ignored', why: 'off-rung' })]);
  });
});

describe('the reference network climbs every rung (promoteReference)', () => {
  const fitted = fitReferenceNetwork(IMAGE, space);
  if (!fitted.ok) throw new Error(fitted.reason);
  const first = { genome: fitted.genome, description: fitted.description, adjustments: fitted.adjustments };
  const climbing = (promoteReference: boolean) =>
    new SuccessiveHalving({
      variant: 'asha-evolution',
      settings: { eta: 3, minEpochs: 1, maxEpochs: 9, populationSize: 4, sampleSize: 2, initialMutations: 2, randomMutations: 6, promoteReference },
      variation,
      seed: 3,
      first,
    });

  it('moves the reference up as soon as its result is in, even when it ranks last, until the top rung', () => {
    const alg = climbing(true);
    const ref = alg.propose();
    expect(ref.genomeHash).toBe(genomeHash(first.genome));
    const others = [alg.propose(), alg.propose(), alg.propose()];
    alg.observe(result(ref, 0.1)); // the worst of rung 0
    others.forEach((p, i) => alg.observe(result(p, 0.5 + i / 10)));
    const up = alg.propose();
    expect([up.genomeHash, up.budgetEpochs, up.promotedFrom]).toEqual([ref.genomeHash, 3, 'e' + (nextId - 4)]);
    expect(up.decisions).toEqual([expect.objectContaining({ kind: 'reference-promotion', fromRung: 0, toRung: 1, fromEpochs: 1, toEpochs: 3 })]);
    for (const d of up.decisions!) expect(searchDecisionValidator.issues(d)).toEqual([]);
    // The ranked rule goes on for the others: the best of rung 0 is promoted next.
    const ranked = alg.propose();
    expect([ranked.genomeHash, ranked.budgetEpochs]).toEqual([others[2]!.genomeHash, 3]);
    alg.observe(result(up, 0.2));
    const top = alg.propose();
    expect([top.genomeHash, top.budgetEpochs, top.decisions![0]!.kind]).toEqual([ref.genomeHash, 9, 'reference-promotion']);
    alg.observe(result(top, 0.3));
    // At the top it stays: no rung above.
    expect(alg.propose().genomeHash).not.toBe(ref.genomeHash);
  });

  it('without it the reference is ranked like any configuration (runs stored before the setting replay as they ran)', () => {
    const alg = climbing(false);
    const ref = alg.propose();
    const others = [alg.propose(), alg.propose(), alg.propose()];
    alg.observe(result(ref, 0.1));
    others.forEach((p, i) => alg.observe(result(p, 0.5 + i / 10)));
    const next = alg.propose();
    expect([next.genomeHash, next.decisions![0]!.kind]).toEqual([others[2]!.genomeHash, 'promotion']);
  });
});
