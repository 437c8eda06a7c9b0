import { describe, expect, it } from 'vitest';
import { defaultSearchSpace, type DataShape } from '@netbreeder/shared-types';
import { createSearchAlgorithm, type SearchAlgorithm } from './search-algorithm.js';
import { SearchSnapshotError, type SearchSnapshot } from './snapshot.js';
import { MinimalGenomeError } from './minimal-genome.js';
import type { SearchAlgorithmName } from '@netbreeder/shared-types';
import { Driver, FLAT, IMAGE, proposalKey } from './test-fixtures.js';

const space = defaultSearchSpace();
const settings = { populationSize: 8, sampleSize: 3 };
const make = (name: SearchAlgorithmName, seed: number, data: DataShape = IMAGE, snapshot?: SearchSnapshot): SearchAlgorithm =>
  createSearchAlgorithm(name, settings, { space, data, seed }, snapshot);
const NAMES: SearchAlgorithmName[] = ['aging-evolution', 'random', 'asha', 'asha-evolution', 'pareto-evolution'];
const keys = (d: Driver) => d.proposals.map(proposalKey);
/** Through JSON and back, as the store would keep it. */
const stored = (s: SearchSnapshot): SearchSnapshot => JSON.parse(JSON.stringify(s)) as SearchSnapshot;

describe.each(NAMES)('%s', (name) => {
  it('has its name', () => {
    expect(make(name, 1).name).toBe(name);
  });

  it.each([
    ['image', IMAGE],
    ['flat', FLAT],
  ] as const)('same seed and same observations give identical proposals (%s data)', (_d, data) => {
    const a = new Driver('same', data).run(make(name, 11, data), 90);
    const b = new Driver('same', data).run(make(name, 11, data), 90);
    expect(a.proposals.length).toBeGreaterThan(40);
    expect(keys(a)).toEqual(keys(b));
    expect(a.proposals.map((p) => p.genome)).toEqual(b.proposals.map((p) => p.genome));
  });

  it('different seeds give different proposals', () => {
    const a = keys(new Driver('same').run(make(name, 11), 60)).map((k) => k.genomeHash);
    const b = keys(new Driver('same').run(make(name, 12), 60)).map((k) => k.genomeHash);
    expect(a).not.toEqual(b);
    expect(a.filter((h) => b.includes(h)).length).toBeLessThan(a.length / 2);
  });

  it.each([0, 5, 37, 70])('snapshot at step %i, restore, continue: the same proposals as never stopping', (at) => {
    const straightAlg = make(name, 21);
    const straight = new Driver('restart').run(straightAlg, 110);

    const driver = new Driver('restart'); // the coordinator side (pending evaluations) carries on
    const before = make(name, 21);
    driver.run(before, at);
    const after = make(name, 21, IMAGE, stored(before.snapshot()));
    driver.run(after, 110 - at);

    expect(keys(driver)).toEqual(keys(straight));
    expect(stored(after.snapshot())).toEqual(stored(straightAlg.snapshot()));
  });

  it('survives many restarts in a row', () => {
    const straight = new Driver('many').run(make(name, 4), 100);
    const driver = new Driver('many');
    let alg = make(name, 4);
    for (let i = 0; i < 10; i++) {
      driver.run(alg, 10);
      alg = make(name, 4, IMAGE, stored(alg.snapshot()));
    }
    expect(keys(driver)).toEqual(keys(straight));
  });

  it('refuses a snapshot taken with another seed', () => {
    const s = stored(make(name, 1).snapshot());
    expect(() => make(name, 2, IMAGE, s)).toThrow(SearchSnapshotError);
  });
});

describe('createSearchAlgorithm', () => {
  it('refuses a snapshot of the other algorithm', () => {
    const s = stored(make('random', 1).snapshot());
    expect(() => make('aging-evolution', 1, IMAGE, s)).toThrow(/belongs to 'random', not 'aging-evolution'/);
  });

  it('refuses a snapshot taken with other settings', () => {
    const s = stored(make('aging-evolution', 1).snapshot());
    expect(() => createSearchAlgorithm('aging-evolution', { populationSize: 9, sampleSize: 3 }, { space, data: IMAGE, seed: 1 }, s)).toThrow(
      /populationSize 8, not 9/,
    );
    const r = stored(make('random', 1).snapshot());
    expect(() => createSearchAlgorithm('random', { ...settings, randomMutations: 3 }, { space, data: IMAGE, seed: 1 }, r)).toThrow(/randomMutations 12, not 3/);
  });

  it('refuses a corrupted snapshot, naming what is wrong', () => {
    const alg = make('aging-evolution', 1);
    new Driver('c').run(alg, 30);
    const good = stored(alg.snapshot());
    if (good.algorithm !== 'aging-evolution' || !good.population.length) throw new Error('expected a population');
    const badHash = structuredClone(good);
    badHash.population[0]!.genomeHash = '0'.repeat(64);
    expect(() => make('aging-evolution', 1, IMAGE, badHash)).toThrow(/population\[0\]\.genomeHash is not the hash of its genome/);
    const badRng = { ...good, rng: [1, 2, 3] } as unknown as SearchSnapshot;
    expect(() => make('aging-evolution', 1, IMAGE, badRng)).toThrow(/rng must be four 32-bit unsigned integers/);
    const badVersion = { ...good, version: 99 } as unknown as SearchSnapshot;
    expect(() => make('aging-evolution', 1, IMAGE, badVersion)).toThrow(SearchSnapshotError);
    const badFitness = structuredClone(good);
    (badFitness.population[0] as { fitness: unknown }).fitness = 'high';
    expect(() => make('aging-evolution', 1, IMAGE, badFitness)).toThrow(/population\[0\]\.fitness must be a finite number/);
  });

  it('refuses an unknown name, a bad seed or bad settings', () => {
    expect(() => make('hill-climbing' as SearchAlgorithmName, 1)).toThrow(/unknown search algorithm 'hill-climbing'/);
    expect(() => make('random', -1)).toThrow(/32-bit unsigned integer/);
    expect(() => make('random', 1.5)).toThrow(/32-bit unsigned integer/);
    expect(() => createSearchAlgorithm('aging-evolution', { populationSize: 0, sampleSize: 3 }, { space, data: IMAGE, seed: 1 })).toThrow(/populationSize must be a whole number ≥ 1/);
    expect(() => createSearchAlgorithm('aging-evolution', { populationSize: 5, sampleSize: 2.5 }, { space, data: IMAGE, seed: 1 })).toThrow(/sampleSize/);
  });

  it('fails at once when the space cannot hold even a linear classifier', () => {
    expect(() => createSearchAlgorithm('aging-evolution', settings, { space: { ...space, maxParams: 10 }, data: IMAGE, seed: 1 })).toThrow(MinimalGenomeError);
  });

  it('passes mutation options through', () => {
    const structural = ['add-layer', 'remove-layer', 'change-width', 'change-kernel-size', 'change-stride', 'change-activation', 'add-skip', 'insert-block', 'remove-block', 'scale-widths', 'duplicate-block', 'change-repeat-count', 'mutate-motif', 'make-motif', 'insert-repeat'];
    const zero = Object.fromEntries(structural.map((name) => [name, 0]));
    const alg = createSearchAlgorithm('aging-evolution', { ...settings, initialMutations: 0, start: 'minimal' }, { space, data: IMAGE, seed: 1, mutation: { weights: zero } });
    const d = new Driver('w').run(alg, 80);
    expect(d.proposals.every((p) => p.genome.nodes.length === 0)).toBe(true);
    expect(d.proposals.some((p) => p.mutation !== null)).toBe(true);
  });

  it('the snapshot is plain JSON', () => {
    const alg = make('aging-evolution', 1);
    new Driver('j').run(alg, 40);
    const s = alg.snapshot();
    expect(stored(s)).toEqual(s);
  });
});

describe('createSearchAlgorithm: the multi-fidelity and multi-objective algorithms', () => {
  const ctx = { space, data: IMAGE, seed: 1 };

  it('refuses a snapshot taken with another eta, epoch range or objective', () => {
    const a = createSearchAlgorithm('asha', { ...settings, eta: 3 }, ctx);
    new Driver('s').run(a, 30);
    expect(() => createSearchAlgorithm('asha', { ...settings, eta: 2 }, ctx, stored(a.snapshot()))).toThrow(/eta 3, not 2/);
    expect(() => createSearchAlgorithm('asha', { ...settings, maxEpochs: 27 }, ctx, stored(a.snapshot()))).toThrow(/maxEpochs 9, not 27/);
    const p = createSearchAlgorithm('pareto-evolution', settings, ctx);
    expect(() => createSearchAlgorithm('pareto-evolution', { ...settings, objective: 'flops' }, ctx, stored(p.snapshot()))).toThrow(/objective params, not flops/);
    expect(() => make('asha-evolution', 1, IMAGE, stored(a.snapshot()))).toThrow(/belongs to 'asha', not 'asha-evolution'/);
  });

  it('refuses a corrupted successive-halving snapshot, naming what is wrong', () => {
    const alg = make('asha-evolution', 1);
    new Driver('c').run(alg, 60);
    const good = stored(alg.snapshot());
    if (good.algorithm !== 'asha-evolution' || !good.rungs[0]!.length) throw new Error('expected rung results');
    const badRung = structuredClone(good);
    (badRung.rungs[0]![0] as { promoted: unknown }).promoted = 'yes';
    expect(() => make('asha-evolution', 1, IMAGE, badRung)).toThrow(/rungs\[0\]\[0\]\.promoted must be true or false/);
    const badSource = structuredClone(good);
    if (badSource.source.algorithm !== 'aging-evolution') throw new Error('expected aging evolution inside');
    badSource.source.population[0]!.genomeHash = '0'.repeat(64);
    expect(() => make('asha-evolution', 1, IMAGE, badSource)).toThrow(/source: cannot restore.*population\[0\]\.genomeHash/);
    const otherRng = { ...good, rng: [1, 2, 3, 4] } as SearchSnapshot;
    expect(() => make('asha-evolution', 1, IMAGE, otherRng)).toThrow(/rng must equal source\.rng/);
  });

  it('the restart tests above did cover promotions and a trimmed Pareto population', () => {
    const a = make('asha', 21);
    const d = new Driver('restart').run(a, 110);
    expect(d.proposals.filter((p) => p.reason.startsWith('promotion')).length).toBeGreaterThan(3);
    const p = make('pareto-evolution', 21);
    const e = new Driver('restart').run(p, 110);
    expect(e.observations.length).toBeGreaterThan(settings.populationSize);
  });
});
