import { describe, expect, it } from 'vitest';
import { checkGenome, defaultSearchSpace, genomeHash, restoreRandom, type Genome } from '@netbreeder/shared-types';
import { AgingEvolution } from './aging-evolution.js';
import { tournamentSelect } from './tournament.js';
import { genomeVariation, type Variation } from './variation.js';
import { MutationError } from './mutations.js';
import type { Observation, Proposal } from './search-algorithm.js';
import { IMAGE, syntheticFitness } from './test-fixtures.js';

const space = defaultSearchSpace();
const variation = genomeVariation(space, IMAGE);
const evolution = (populationSize: number, sampleSize: number, seed = 1, initialMutations = 2) =>
  new AgingEvolution({ settings: { populationSize, sampleSize, initialMutations }, variation, seed });

let nextId = 0;
const observed = (p: Proposal, fitness = syntheticFitness(p.genome)): Observation => ({
  evaluationId: `e${nextId++}`,
  genomeHash: p.genomeHash,
  genome: p.genome,
  fitness,
});

describe('AgingEvolution', () => {
  it('proposes P initial members first: valid, parentless, diverse, near minimal', () => {
    const alg = evolution(8, 3);
    const first = Array.from({ length: 8 }, () => alg.propose());
    first.forEach((p, i) => {
      expect(p.parentHashes).toEqual([]);
      expect(p.mutation).toBeNull();
      expect(p.reason).toMatch(new RegExp(`^initial member ${i + 1} of 8: minimal genome with [0-2] random mutation`));
      expect(checkGenome(p.genome, space, IMAGE).ok).toBe(true);
      expect(p.genomeHash).toBe(genomeHash(p.genome));
      expect(p.genome.nodes.length).toBeLessThanOrEqual(8); // at most 2 mutations, each at most one block of up to 4 layers
    });
    expect(new Set(first.map((p) => p.genomeHash)).size).toBe(8);
  });

  it('asked again before any result arrived, proposes another initial member', () => {
    const alg = evolution(3, 2);
    for (let i = 0; i < 3; i++) alg.propose();
    const extra = alg.propose();
    expect(extra.parentHashes).toEqual([]);
    expect(extra.reason).toMatch(/^extra initial member: all 3 initial members are out and no result has arrived yet/);
  });

  it('after P initial members and a result, proposes a mutated child of a member and records its lineage', () => {
    const alg = evolution(3, 2);
    const initial = [alg.propose(), alg.propose(), alg.propose()];
    alg.observe(observed(initial[1]!));
    const child = alg.propose();
    expect(child.parentHashes).toEqual([initial[1]!.genomeHash]); // the only member
    expect(child.mutation).not.toBeNull();
    expect(child.genomeHash).not.toBe(initial[1]!.genomeHash);
    expect(checkGenome(child.genome, space, IMAGE).ok).toBe(true);
    expect(child.reason).toContain(`the fittest drawn, ${initial[1]!.genomeHash.slice(0, 12)}`);
    expect(child.reason).toContain(`${child.mutation!.operator}: ${child.mutation!.detail}`);
  });

  it('removes the OLDEST member when the population exceeds P, not the worst', () => {
    const alg = evolution(3, 2);
    const ps = Array.from({ length: 4 }, () => alg.propose());
    const fitness = [0.9, 0.1, 0.2, 0.3]; // the oldest is the best
    ps.forEach((p, i) => alg.observe(observed(p, fitness[i])));
    const members = alg.members();
    expect(members.map((m) => m.fitness)).toEqual([0.1, 0.2, 0.3]);
    expect(members.map((m) => m.genomeHash)).toEqual(ps.slice(1).map((p) => p.genomeHash));
    expect(alg.snapshot().population.map((m) => m.fitness)).toEqual([0.1, 0.2, 0.3]);
  });

  it('picks as parent the fittest of a uniform sample with replacement (replayed from the rng state)', () => {
    const alg = evolution(10, 3, 7);
    for (let i = 0; i < 10; i++) alg.observe(observed(alg.propose(), i / 10));
    for (let i = 0; i < 30; i++) {
      const before = alg.snapshot();
      const expected = tournamentSelect(before.population.map((m) => m.fitness), 3, restoreRandom(before.rng));
      const child = alg.propose();
      expect(child.parentHashes).toEqual([before.population[expected.winner]!.genomeHash]);
      alg.observe(observed(child, (i % 7) / 7));
    }
  });

  it('with S much larger than P, the parent is the population best', () => {
    const alg = evolution(4, 60);
    const ps = Array.from({ length: 4 }, () => alg.propose());
    [0.2, 0.7, 0.4, 0.1].forEach((f, i) => alg.observe(observed(ps[i]!, f)));
    // P(best never drawn in 60 draws of 4) = 0.75^60 ≈ 3e-8
    for (let i = 0; i < 10; i++) expect(alg.propose().parentHashes).toEqual([ps[1]!.genomeHash]);
  });

  it('counts a result delivered twice once', () => {
    const alg = evolution(5, 2);
    const p = alg.propose();
    const o = observed(p);
    alg.observe(o);
    alg.observe(o);
    expect(alg.members()).toHaveLength(1);
    expect(alg.snapshot().observed).toBe(1);
  });

  it('rejects malformed observations', () => {
    const alg = evolution(5, 2);
    const p = alg.propose();
    expect(() => alg.observe({ ...observed(p), fitness: Number.NaN })).toThrow(/fitness must be a finite number/);
    expect(() => alg.observe({ ...observed(p), genomeHash: 'f'.repeat(64) })).toThrow(/is not the genome's hash/);
    expect(() => alg.observe({ ...observed(p), evaluationId: '' })).toThrow(/evaluation id/);
    expect(() => alg.observe({ ...observed(p), genome: { nodes: 'x' } as unknown as Genome })).toThrow(/genome schema/);
    expect(alg.members()).toEqual([]);
  });

  it('observing draws no randomness', () => {
    const alg = evolution(5, 2);
    const p = alg.propose();
    const before = alg.snapshot().rng;
    alg.observe(observed(p));
    expect(alg.snapshot().rng).toEqual(before);
  });

  it('proposes a fresh member, saying why, when the parent has no valid mutation', () => {
    const stuck: Variation<Genome> = { ...variation, mutate: () => { throw new MutationError('no room'); } };
    const alg = new AgingEvolution({ settings: { populationSize: 1, sampleSize: 1, initialMutations: 0 }, variation: stuck, seed: 1 });
    alg.observe(observed(alg.propose()));
    const p = alg.propose();
    expect(p.parentHashes).toEqual([]);
    expect(p.reason).toMatch(/has no valid mutation \(no room\); a fresh member instead/);
  });
});

describe('AgingEvolution on another encoding (the Variation seam)', () => {
  // Bit strings with fitness = fraction of ones ("OneMax", a standard toy problem), one-bit flips.
  const BITS = 24;
  const bits: Variation<number[]> = {
    minimal: (rng) => Array.from({ length: BITS }, () => (rng.chance(0.5) ? 1 : 0)),
    mutate: (parent, rng) => {
      const i = rng.int(0, BITS - 1);
      const genome = parent.map((b, j) => (j === i ? 1 - b : b));
      return { genome, mutation: { operator: 'flip-bit', detail: `bit ${i}` } };
    },
    hash: (g) => g.join(''),
    isGenome: (v): v is number[] => Array.isArray(v) && v.every((b) => b === 0 || b === 1),
  };

  it('climbs: after 400 cycles the best member is far above the initial population', () => {
    const alg = new AgingEvolution({ settings: { populationSize: 20, sampleSize: 5, initialMutations: 0 }, variation: bits, seed: 3 });
    const ones = (g: number[]) => g.reduce((a, b) => a + b, 0) / BITS;
    let initialBest = 0;
    let best = 0;
    for (let i = 0; i < 420; i++) {
      const p = alg.propose();
      const f = ones(p.genome);
      if (i < 20) initialBest = Math.max(initialBest, f);
      best = Math.max(best, f);
      alg.observe({ evaluationId: `b${i}`, genomeHash: p.genomeHash, genome: p.genome, fitness: f });
    }
    // Random 24-bit strings average 12 ones; the best of 20 rarely passes 18. Selection with one-bit
    // flips should reach at least 22 of 24 in 400 cycles.
    expect(best).toBeGreaterThanOrEqual(22 / 24);
    expect(best).toBeGreaterThan(initialBest);
  });
});

describe('aging evolution records its decisions', () => {
  it('the tournament draw as replayed from the rng state, the winner, the mutation; then the oldest ageing out', () => {
    const alg = evolution(3, 2, 4);
    const ps = [alg.propose(), alg.propose(), alg.propose()];
    expect(ps.map((p) => p.decisions![0]!.kind)).toEqual(['random-genome', 'random-genome', 'random-genome']);
    const fitness = [0.3, 0.8, 0.5];
    const added = ps.map((p, i) => alg.observe(observed(p, fitness[i])));
    expect(added.map((d) => d.map((x) => x.kind))).toEqual([['member-added'], ['member-added'], ['member-added']]);
    const rng = restoreRandom(alg.snapshot().rng);
    const { winner, drawn } = tournamentSelect(fitness, 2, rng);
    const child = alg.propose();
    const [selection, mutation] = child.decisions!;
    expect(selection).toMatchObject({ kind: 'parent-selected', method: 'tournament', populationSize: 3, sampleSize: 2 });
    expect(selection!.kind === 'parent-selected' && selection!.drawn.map((m) => m.fitness)).toEqual(drawn.map((k) => fitness[k]));
    expect(selection!.kind === 'parent-selected' && selection!.winner.genomeHash).toBe(ps[winner]!.genomeHash);
    expect(mutation).toMatchObject({ kind: 'mutation', parentHash: ps[winner]!.genomeHash, childHash: child.genomeHash, operator: child.mutation!.operator });
    // a fourth member: the oldest (the first observed, fitness 0.3) leaves
    const out = alg.observe(observed(child, 0.1));
    expect(out.map((d) => d.kind)).toEqual(['member-added', 'member-removed']);
    expect(out[1]).toMatchObject({ rule: 'oldest', member: { genomeHash: ps[0]!.genomeHash, fitness: 0.3 } });
  });
});
