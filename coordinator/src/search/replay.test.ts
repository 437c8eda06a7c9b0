import { describe, expect, it } from 'vitest';
import { defaultSearchSpace, searchDecisionValidator, type SearchAlgorithmName, type SearchDecision } from '@netbreeder/shared-types';
import { createSearchAlgorithm, type SearchAlgorithm } from './search-algorithm.js';
import { forgetResults, replaySearch, type RecordedCall } from './replay.js';
import { Driver, IMAGE } from './test-fixtures.js';

const space = defaultSearchSpace();
const settings = { populationSize: 6, sampleSize: 3, eta: 2, minEpochs: 1, maxEpochs: 4 };
const NAMES: SearchAlgorithmName[] = ['aging-evolution', 'random', 'asha', 'asha-evolution', 'pareto-evolution'];

/** Wraps an algorithm so every call is written down as the coordinator's decision log holds it (through JSON). */
function recording(alg: SearchAlgorithm, calls: RecordedCall[]): SearchAlgorithm {
  return {
    name: alg.name,
    propose() {
      const p = alg.propose();
      calls.push({ step: calls.length, kind: 'propose', genomeHash: p.genomeHash, parentHashes: p.parentHashes, budgetEpochs: p.budgetEpochs ?? null, decisionsJson: JSON.stringify(p.decisions ?? []) });
      return p;
    },
    observe(o) {
      const decisions = alg.observe(o);
      calls.push({ step: calls.length, kind: 'observe', observation: JSON.parse(JSON.stringify(o)), decisionsJson: JSON.stringify(decisions) });
      return decisions;
    },
    snapshot: () => alg.snapshot(),
  };
}

function recordedRun(name: SearchAlgorithmName, seed: number, steps: number) {
  const calls: RecordedCall[] = [];
  const alg = createSearchAlgorithm(name, settings, { space, data: IMAGE, seed });
  new Driver(`replay-${name}`).run(recording(alg, calls), steps);
  return { calls, snapshot: JSON.parse(JSON.stringify(alg.snapshot())) as unknown };
}

const decisionsOf = (calls: RecordedCall[]): SearchDecision[] => calls.flatMap((c) => (c.kind === 'skip' ? [] : (JSON.parse(c.decisionsJson) as SearchDecision[])));

describe.each(NAMES)('replay of a seeded %s run', (name) => {
  const { calls, snapshot } = recordedRun(name, 21, 120);

  it('reproduces every proposal, every decision and the final state', () => {
    const report = replaySearch({ algorithm: name, settings, context: { space, data: IMAGE, seed: 21 }, calls, storedSnapshot: snapshot });
    expect(report.disagreement).toBeNull();
    expect(report.agree).toBe(true);
    expect(report.proposals + report.observations).toBe(calls.length);
    expect(report.decisions).toBe(decisionsOf(calls).length);
  });

  it('records every decision in the versioned schema, each with its reason', () => {
    const decisions = decisionsOf(calls);
    for (const d of decisions) expect(searchDecisionValidator.issues(d)).toEqual([]);
    for (const d of decisions) expect(d.reason.length).toBeGreaterThan(10);
    const kinds = new Set(decisions.map((d) => d.kind));
    expect(kinds.has('random-genome')).toBe(true);
    if (name === 'aging-evolution' || name === 'pareto-evolution' || name === 'asha-evolution') {
      expect(kinds.has('parent-selected') && kinds.has('mutation') && kinds.has('member-added') && kinds.has('member-removed')).toBe(true);
    }
    if (name === 'asha' || name === 'asha-evolution') expect(kinds.has('promotion') && kinds.has('no-promotion')).toBe(true);
  });

  it('notices another seed', () => {
    const report = replaySearch({ algorithm: name, settings, context: { space, data: IMAGE, seed: 22 }, calls });
    expect(report.agree).toBe(false);
    expect(report.disagreement!.step).toBe(0);
  });
});

describe('replay finds where a record was changed', () => {
  it('a changed fitness shows as a disagreement at or after that result', () => {
    const { calls } = recordedRun('aging-evolution', 5, 120);
    const at = calls.findIndex((c, i) => i > 30 && c.kind === 'observe');
    const changed = calls.map((c, i) => (i === at && c.kind === 'observe' ? { ...c, observation: { ...c.observation, fitness: c.observation.fitness + 0.25 } } : c));
    const report = replaySearch({ algorithm: 'aging-evolution', settings, context: { space, data: IMAGE, seed: 5 }, calls: changed });
    expect(report.agree).toBe(false);
    // The decision of that very observation names the fitness it was given.
    expect(report.disagreement).toMatchObject({ step: at, what: 'decisions' });
  });

  it('a tournament whose recorded draw was edited disagrees at that proposal', () => {
    const { calls } = recordedRun('pareto-evolution', 9, 80);
    const at = calls.findIndex((c) => c.kind === 'propose' && c.decisionsJson.includes('parent-selected'));
    const edited = calls.map((c, i) => (i === at && c.kind === 'propose' ? { ...c, decisionsJson: c.decisionsJson.replace('"sampleSize":3', '"sampleSize":4') } : c));
    const report = replaySearch({ algorithm: 'pareto-evolution', settings, context: { space, data: IMAGE, seed: 9 }, calls: edited });
    expect(report.disagreement).toMatchObject({ step: at, what: 'decisions' });
  });

  it('skipped steps (a user genome, a refusal) ask the algorithm nothing', () => {
    const { calls, snapshot } = recordedRun('asha-evolution', 3, 60);
    const withSkips: RecordedCall[] = [...calls.slice(0, 10), { step: -1, kind: 'skip' }, ...calls.slice(10), { step: -2, kind: 'skip' }];
    const report = replaySearch({ algorithm: 'asha-evolution', settings, context: { space, data: IMAGE, seed: 3 }, calls: withSkips, storedSnapshot: snapshot });
    expect(report).toMatchObject({ agree: true, skipped: 2 });
  });

  it('a quarantine (forget) replays exactly, and a changed list of forgotten results disagrees', () => {
    for (const name of ['aging-evolution', 'asha-evolution', 'pareto-evolution'] as const) {
      const calls: RecordedCall[] = [];
      const alg = createSearchAlgorithm(name, settings, { space, data: IMAGE, seed: 8 });
      const driver = new Driver(`forget-${name}`);
      const recorder = recording(alg, calls);
      driver.run(recorder, 60);
      // Results whose evaluation number is odd came from the quarantined worker.
      const reason = 'worker w-odd was quarantined';
      const decision = forgetResults(alg, (id) => Number(id.split('-')[1]) % 2 === 1, reason);
      expect(decision.kind === 'results-forgotten' && decision.evaluationIds.length).toBeGreaterThan(0);
      const ids = decision.kind === 'results-forgotten' ? decision.evaluationIds : [];
      calls.push({ step: calls.length, kind: 'forget', evaluationIds: ids, reason, decisionsJson: JSON.stringify([decision]) });
      driver.run(recorder, 60);
      const snapshot = JSON.parse(JSON.stringify(alg.snapshot())) as unknown;
      const report = replaySearch({ algorithm: name, settings, context: { space, data: IMAGE, seed: 8 }, calls, storedSnapshot: snapshot });
      expect(report.disagreement).toBeNull();

      // A forget that names one result fewer leaves the replayed population different.
      const at = calls.findIndex((c) => c.kind === 'forget');
      const shorter = calls.map((c) => (c.kind === 'forget' ? { ...c, evaluationIds: ids.slice(1) } : c));
      expect(replaySearch({ algorithm: name, settings, context: { space, data: IMAGE, seed: 8 }, calls: shorter }).disagreement).toMatchObject({ step: at, what: 'decisions' });
    }
  });
});
