import { describe, expect, it } from 'vitest';
import { SEARCH_DECISION_VERSION, genomeHash, type EvaluationJob, type Genome } from '@netbreeder/shared-types';
import { createLogger } from '../logger.js';
import type { EvaluationQueue } from '../queue/evaluation-queue.js';
import type { RunStore } from '../store/run-store.js';
import { searchJob, searchResult, storeWithRun } from '../store/test-fixtures.js';
import { howItWasFound } from './explain-lineage.js';
import type { ConsideredGenome } from './reference-comparison.js';
import { ChampionPhase, type ChampionCandidate } from './champion-phase.js';
import { ChampionChoiceError, meetsRule, pickChampion, requestEnsemble } from './champion-choice.js';

/** The champion phase's choice of candidates on a real (in-memory) store; the queue only records what it is given. */
const net = (units: number[], optimizer: Genome['training']['optimizer'] = 'adam'): Genome => {
  const nodes = units.map((u, i) => ({ id: `d${i}`, kind: 'dense' as const, inputs: [i ? `d${i - 1}` : 'input'], units: u, activation: 'relu' as const }));
  return { schemaVersion: 1, nodes, output: nodes.at(-1)!.id, training: { optimizer, learningRate: 0.001, batchSize: 32, weightDecay: 0, epochs: 1 } };
};
/** seq, genome, validation accuracy, parameters, worker-measured latency (ms; null: not measured). */
const RESULTS: Array<[Genome, number, number, number | null]> = [
  [net([64, 64]), 0.9, 5000, 2.0],
  [net([64, 32]), 0.88, 3000, 1.5],
  [net([8], 'sgd'), 0.8, 100, 0.2],
  [net([16]), 0.7, 200, null],
];

function storeWith(champion: Record<string, unknown> = {}) {
  const store = storeWithRun({ champion: { topK: 2, ...champion } });
  RESULTS.forEach(([genome, acc, params, latency], seq) => {
    const hash = genomeHash(genome);
    store.putGenome({ hash, genome, params, flops: params * 2, summary: `net ${seq}` });
    const job = searchJob(`r1-s${seq}-a1`, { genome, genomeHash: hash, seed: seq });
    store.addEvaluation(job, seq, 1000, true);
    store.recordResult(
      job.evaluationId,
      searchResult(job.evaluationId, 'w1', { valAccuracy: acc, trainAccuracy: acc, paramCount: params, flops: params * 2, ...(latency === null ? {} : { latencyMsPerSample: latency }) }),
      2000 + seq,
    );
  });
  const queued: EvaluationJob[] = [];
  const queue = { add: async (job: EvaluationJob) => void queued.push(job) } as unknown as EvaluationQueue;
  const phase = new ChampionPhase({ store, queue, log: createLogger('test', 'silent'), dataDir: '/nowhere', now: () => 5000, testSplit: () => { throw new Error('not scored here'); } });
  return { store, phase, queued };
}

const hashOf = (seq: number) => genomeHash(RESULTS[seq]![0]);
async function begin(champion: Record<string, unknown> = {}, before?: (store: RunStore) => void) {
  const { store, phase, queued } = storeWith(champion);
  before?.(store);
  await phase.begin(store.getRun('r1')!);
  const detail = store.events('r1', 'champion-candidates').at(-1)!.detail as { candidates: ChampionCandidate[]; choice: { by: string; note?: string }; considered: ConsideredGenome[] };
  return { store, queued, ...detail };
}

describe('choosing the champion candidates', () => {
  // Changed with issue 20: only the champion, chosen on validation, gets a final training (the
  // topK genomes were all trained and the best on the test split kept); topK are the ones considered.
  it('without a rule: the best genome by validation is the champion, the only one queued for a final training', async () => {
    const { candidates, choice, queued, considered } = await begin();
    expect(choice).toEqual({ by: 'best' });
    expect(candidates.map((c) => c.genomeHash)).toEqual([hashOf(0)]);
    expect(considered.map((c) => c.genomeHash)).toEqual([hashOf(0), hashOf(1)]);
    expect(queued.map((j) => j.kind)).toEqual(['champion']);
  });

  it('by a parameter rule: only results under the limit compete', async () => {
    const { candidates, choice, considered } = await begin({ rule: { maxParams: 3000 } });
    expect(choice).toEqual({ by: 'rule', rule: { maxParams: 3000 } });
    expect(candidates.map((c) => c.genomeHash)).toEqual([hashOf(1)]);
    expect(considered.map((c) => c.genomeHash)).toEqual([hashOf(1), hashOf(2)]);
  });

  it('by a latency rule: an unmeasured latency cannot meet it', async () => {
    const { candidates } = await begin({ rule: { maxLatencyMs: 1 } });
    expect(candidates.map((c) => c.genomeHash)).toEqual([hashOf(2)]);
    expect(meetsRule({ maxLatencyMs: 1 }, { params: 1, flops: 1, latencyMs: null })).toBe(false);
    expect(meetsRule({ maxParams: 10, maxFlops: 10 }, { params: 10, flops: 10, latencyMs: null })).toBe(true);
  });

  it('a rule nothing meets falls back to the best overall and says so', async () => {
    const { candidates, choice } = await begin({ rule: { maxParams: 50 } });
    expect(choice.by).toBe('best');
    expect(choice.note).toContain('no result met the rule (at most 50 parameters)');
    expect(candidates[0]!.genomeHash).toBe(hashOf(0));
  });

  it('a pick is the only genome competing to be champion, whatever the rule', async () => {
    const { candidates, choice } = await begin({ rule: { maxParams: 3000 } }, (store) => pickChampion(store, 'r1', hashOf(3), 3000));
    expect(choice).toMatchObject({ by: 'pick', genomeHash: hashOf(3), evaluationId: 'r1-s3-a1', valAccuracy: 0.7 });
    expect(candidates).toEqual([expect.objectContaining({ genomeHash: hashOf(3), champion: true })]);
  });

  it('refuses a pick of no finished result, during the champion training, or after the end on a coordinator not driving the run; a refusal records nothing', () => {
    const { store } = storeWith();
    expect(() => pickChampion(store, 'r1', 'f'.repeat(64), 3000)).toThrow(ChampionChoiceError);
    store.setRunState('r1', 'training-champion');
    expect(() => pickChampion(store, 'r1', hashOf(0), 3000)).toThrow(/pick the champion while it searches or is paused, or once it has finished/);
    store.setRunState('r1', 'finished');
    expect(() => pickChampion(store, 'r1', hashOf(0), 3000, null)).toThrow(/no longer drives it/);
    expect(store.events('r1', 'champion-picked')).toEqual([]);
    expect(store.getRun('r1')!.state).toBe('finished');
  });

  it('a pick after the run finished starts a new champion round with the picked genome alone, under a key of its own', async () => {
    const { store, phase, queued } = storeWith();
    await phase.begin(store.getRun('r1')!);
    store.setRunState('r1', 'finished');
    const picked = pickChampion(store, 'r1', hashOf(2), 6000, 'r1');
    expect(picked).toMatchObject({ retraining: true, evaluationId: 'r1-s2-a1' });
    expect(store.getRun('r1')!.state).toBe('training-champion');
    expect(phase.candidates('r1')).toEqual([{ sourceEvaluationId: 'r1-s2-a1', genomeHash: hashOf(2), seq: 4, valAccuracy: 0.8, champion: true }]);
    await phase.ensureJobs(store.getRun('r1')!);
    // 4 proposals: the round's key is 4, past every proposal and the first round's key (0)
    expect(queued.map((j) => j.evaluationId)).toEqual(['r1-c0-a1', 'r1-c4-a1']);
    expect(queued.at(-1)).toMatchObject({ kind: 'champion', genomeHash: hashOf(2), seed: 2 });
  });

  it('adds the ensemble members, accurate and different, beside the champion candidates', async () => {
    // 0 and 1 share most layer tokens (dense 64 twice vs dense 64 + dense 32), 2 shares none with 0:
    // with a penalty of 0.2, 2 (0.8 - 0) beats 1 (0.88 - 0.2 * 2/4 = 0.78).
    const { candidates } = await begin({ topK: 1, ensemble: { size: 2, diversityPenalty: 0.2 } });
    expect(candidates).toEqual([
      expect.objectContaining({ genomeHash: hashOf(0), champion: true, ensemblePosition: 0 }),
      expect.objectContaining({ genomeHash: hashOf(2), champion: false, ensemblePosition: 1 }),
    ]);
  });
});

describe('a new ensemble asked of a finished run', () => {
  it('is refused before the run finished and on a coordinator not driving it; then trains members only, under keys of their own', async () => {
    const { store, phase, queued } = storeWith();
    const settings = { size: 2, diversityPenalty: 0.2 };
    expect(() => requestEnsemble(store, 'r1', settings, 6000, 'r1')).toThrow(/can be asked of a finished run/);
    await phase.begin(store.getRun('r1')!);
    store.setRunState('r1', 'finished');
    expect(() => requestEnsemble(store, 'r1', settings, 6000, null)).toThrow(/no longer drives run r1/);
    const asked = requestEnsemble(store, 'r1', settings, 6000, 'r1');
    // as in the run-file case above: 0, then 2 (0.8 - 0.2 * 0) over 1 (0.88 - 0.2 * 0.5)
    expect(asked).toMatchObject({ round: 1, members: [{ genomeHash: hashOf(0), similarity: 0 }, { genomeHash: hashOf(2), similarity: 0 }] });
    expect(phase.candidates('r1').map((c) => [c.seq, c.champion, c.ensemblePosition])).toEqual([[4, false, 0], [5, false, 1]]);
    await phase.ensureJobs(store.getRun('r1')!);
    expect(queued.slice(-2).map((j) => j.evaluationId)).toEqual(['r1-c4-a1', 'r1-c5-a1']);
  });
});

describe('how the champion was found, from the decision log', () => {
  it('tells the tournament and the mutation that made a child, and the random start of its ancestor', () => {
    const { store } = storeWith();
    const [parent, child] = [hashOf(2), hashOf(3)];
    const v = SEARCH_DECISION_VERSION;
    store.addSearchStep({ runId: 'r1', kind: 'propose', evaluationId: 'r1-s2-a1', genomeHash: parent, parentHashes: [], budgetEpochs: null, reason: 'initial', at: 1, decisions: [{ kind: 'random-genome', version: v, reason: 'initial member 1 of 4', role: 'initial', genomeHash: parent, requested: 1, mutations: [{ operator: 'add-layer', detail: 'added dense d0' }] }] });
    store.addSearchStep({
      runId: 'r1', kind: 'propose', evaluationId: 'r1-s3-a1', genomeHash: child, parentHashes: [parent], budgetEpochs: null, reason: 'child', at: 2,
      decisions: [
        { kind: 'parent-selected', version: v, reason: 'tournament', method: 'tournament', populationSize: 4, sampleSize: 2, drawn: [{ evaluationId: 'r1-s2-a1', genomeHash: parent, fitness: 0.8 }, { evaluationId: 'r1-s0-a1', genomeHash: hashOf(0), fitness: 0.5 }], winner: { evaluationId: 'r1-s2-a1', genomeHash: parent, fitness: 0.8 } },
        { kind: 'mutation', version: v, reason: 'change-width', parentHash: parent, childHash: child, operator: 'change-width', detail: 'd0 8 → 16 units' },
      ],
    });
    store.addLineage('r1', { evaluationId: 'r1-s3-a1', childHash: child, parentHash: parent, operator: 'change-width', detail: 'd0 8 → 16 units' });
    const found = howItWasFound(store, 'r1', child);
    expect(found.map((g) => g.genomeHash)).toEqual([parent, child]);
    expect(found[0]!.lines).toEqual(['As one of the first members of the population, it began as the minimal network with 1 random change(s): add-layer (added dense d0).']);
    expect(found[1]!.lines[0]).toBe(`Its parent was chosen by drawing 2 of the 4 living members at random (\`${parent.slice(0, 12)}\` 80.0%, \`${hashOf(0).slice(0, 12)}\` 50.0%); the most accurate of them, \`${parent.slice(0, 12)}\` (80.0%), won.`);
    expect(found[1]!.lines[1]).toBe('The child was made by change-width: d0 8 → 16 units.');
  });
});
