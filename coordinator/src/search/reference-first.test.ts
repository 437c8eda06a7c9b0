import { describe, expect, it } from 'vitest';
import { defaultSearchSpace, fitReferenceNetwork, genomeHash, searchDecisionValidator, type DataShape, type SearchAlgorithmName, type SearchSpace } from '@netbreeder/shared-types';
import { createSearchAlgorithm, type SearchContext } from './search-algorithm.js';
import { replaySearch, type RecordedCall } from './replay.js';
import type { SearchSnapshot } from './snapshot.js';
import { Driver, FLAT, IMAGE, proposalKey } from './test-fixtures.js';

const NAMES: SearchAlgorithmName[] = ['aging-evolution', 'random', 'asha', 'asha-evolution', 'pareto-evolution'];
const settings = { populationSize: 6, sampleSize: 3, eta: 2, minEpochs: 1, maxEpochs: 4 };

function contextWithReference(data: DataShape, seed: number, space: SearchSpace = defaultSearchSpace()): SearchContext {
  const fit = fitReferenceNetwork(data, space);
  if (!fit.ok) throw new Error(fit.reason);
  return { space, data, seed, reference: { genome: fit.genome, description: fit.description, adjustments: fit.adjustments } };
}
const stored = (s: SearchSnapshot): SearchSnapshot => JSON.parse(JSON.stringify(s)) as SearchSnapshot;

describe.each(NAMES)('%s with a reference network', (name) => {
  it.each([['image', IMAGE], ['flat', FLAT]] as const)('proposes the reference first, recorded as such, and never again (%s data)', (_d, data) => {
    const ctx = contextWithReference(data, 5);
    const driver = new Driver('ref', data).run(createSearchAlgorithm(name, settings, ctx), 80);
    const [first, ...rest] = driver.proposals;
    expect(first!.genomeHash).toBe(genomeHash(ctx.reference!.genome));
    expect(first!.parentHashes).toEqual([]);
    const decision = first!.decisions!.find((d) => d.kind === 'reference-network');
    expect(decision).toMatchObject({ kind: 'reference-network', genomeHash: first!.genomeHash, adjustments: [] });
    expect(searchDecisionValidator.issues(decision)).toEqual([]);
    expect(first!.reason).toMatch(/the reference network/);
    // A new configuration of successive halving starts at rung 0 like any other.
    if (name === 'asha' || name === 'asha-evolution') expect(first!.budgetEpochs).toBe(1);
    expect(rest.filter((p) => p.decisions?.some((d) => d.kind === 'reference-network'))).toEqual([]);
  });

  it('continues identically from a snapshot taken before or after the reference was proposed', () => {
    for (const at of [1, 2, 30]) {
      const straightAlg = createSearchAlgorithm(name, settings, contextWithReference(IMAGE, 9));
      const straight = new Driver('restart-ref').run(straightAlg, 90);
      const driver = new Driver('restart-ref');
      const before = createSearchAlgorithm(name, settings, contextWithReference(IMAGE, 9));
      driver.run(before, at);
      const after = createSearchAlgorithm(name, settings, contextWithReference(IMAGE, 9), stored(before.snapshot()));
      driver.run(after, 90 - at);
      expect(driver.proposals.map(proposalKey)).toEqual(straight.proposals.map(proposalKey));
      expect(stored(after.snapshot())).toEqual(stored(straightAlg.snapshot()));
    }
  });

  it('replays exactly, and replay without the reference disagrees at the first proposal', () => {
    const ctx = contextWithReference(IMAGE, 13);
    const calls: RecordedCall[] = [];
    const alg = createSearchAlgorithm(name, settings, ctx);
    const driver = new Driver('replay-ref');
    const wrapped = {
      name: alg.name,
      propose() {
        const p = alg.propose();
        calls.push({ step: calls.length, kind: 'propose' as const, genomeHash: p.genomeHash, parentHashes: p.parentHashes, budgetEpochs: p.budgetEpochs ?? null, decisionsJson: JSON.stringify(p.decisions ?? []) });
        return p;
      },
      observe(o: Parameters<typeof alg.observe>[0]) {
        const decisions = alg.observe(o);
        calls.push({ step: calls.length, kind: 'observe' as const, observation: JSON.parse(JSON.stringify(o)), decisionsJson: JSON.stringify(decisions) });
        return decisions;
      },
      snapshot: () => alg.snapshot(),
    };
    driver.run(wrapped, 60);
    const snapshot = JSON.parse(JSON.stringify(alg.snapshot())) as unknown;
    expect(replaySearch({ algorithm: name, settings, context: ctx, calls, storedSnapshot: snapshot }).disagreement).toBeNull();
    const without = replaySearch({ algorithm: name, settings, context: { ...ctx, reference: undefined }, calls });
    expect(without.disagreement).toMatchObject({ step: 0, what: 'genome' });
  });
});

it('refuses a reference that breaks the search space', () => {
  const ctx = contextWithReference(IMAGE, 1);
  expect(() => createSearchAlgorithm('aging-evolution', settings, { ...ctx, space: { ...ctx.space, maxParams: 4000 } })).toThrow(/reference network does not fit/);
});
