import { describe, expect, it } from 'vitest';
import type { EvaluationJob, EvaluationResult } from '@netbreeder/shared-types';
import { createLogger } from '../logger.js';
import type { EvaluationQueue, FinishedJob } from '../queue/evaluation-queue.js';
import { searchJob, searchResult, storeWithRun } from '../store/test-fixtures.js';
import { Verifier } from './verifier.js';

const result = (evaluationId: string, workerId: string, valAccuracy: number): EvaluationResult =>
  searchResult(evaluationId, workerId, { valAccuracy, valLoss: 1 - valAccuracy, epochsRun: 2, samplesSeen: 20, samplesPerSecond: 20, cpuSeconds: 1 });

/** A verifier over an in-memory store and a queue that only records what is added and removed. */
function setup(live: string[]) {
  const store = storeWithRun({ verification: { spotCheckFraction: 1, timeoutSeconds: 100 } }, 0);
  const queued = new Map<string, EvaluationJob>();
  const queue = { add: async (j: EvaluationJob) => void queued.set(j.evaluationId, j), remove: async (id: string) => void queued.delete(id) } as unknown as EvaluationQueue;
  let now = 1000;
  const quarantined: string[] = [];
  const verifier = new Verifier({ store, queue, log: createLogger('test', 'silent'), now: () => now, liveWorkerBesides: (excluded) => live.some((w) => !excluded.includes(w)), onQuarantine: (w) => quarantined.push(w) });
  const run = () => store.getRun('r1')!;
  /** A recorded search result of `workerId`, spot-checked. */
  const searchResult = async (seq: number, workerId: string, valAccuracy: number) => {
    const id = `r1-s${seq}-a1`;
    // As a real search job: it uploads checkpoints, and this attempt resumed from one.
    const job = searchJob(id, {
      seed: seq,
      budget: { epochs: 2, maxSeconds: 10 },
      checkpoints: { everyEpochs: 1, final: false, maxBytes: 2 ** 20 },
      resume: { sha256: 'b'.repeat(64), bytes: 100, epoch: 1, evaluationId: id },
    });
    store.addEvaluation(job, seq, now, true);
    store.recordResult(id, result(id, workerId, valAccuracy), now);
    await verifier.afterSearchResult(run(), id);
    return id;
  };
  const finish = (id: string, workerId: string, valAccuracy: number) =>
    verifier.reconcile({ id, state: 'completed', returnvalue: result(id, workerId, valAccuracy), failedReason: null, unrecoverable: false } satisfies FinishedJob);
  return { store, verifier, queued, quarantined, run, searchResult, finish, tick: (ms: number) => (now += ms) };
}

describe('Verifier', () => {
  it('re-runs a result elsewhere with the same seed and budget, asks a third worker on disagreement, and quarantines the repeat offender', async () => {
    const t = setup(['liar', 'a', 'b']);
    const e1 = await t.searchResult(0, 'liar', 0.95);
    const v1 = t.queued.get(`${e1}-v1`)!;
    expect(v1).toMatchObject({ verifies: e1, excludeWorkers: ['liar'], seed: 0, budget: { epochs: 2, maxSeconds: 20 } });
    // It trains from epoch 0 and uploads nothing (no later attempt would resume it).
    expect(v1.checkpoints).toBeUndefined();
    expect(v1.resume).toBeUndefined();
    await t.finish(v1.evaluationId, 'a', 0.7);
    const v2 = t.queued.get(`${e1}-v2`)!;
    expect(v2.excludeWorkers).toEqual(['liar', 'a']);
    await t.finish(v2.evaluationId, 'b', 0.7);
    expect(t.verifier.trust.getVerdict(e1)).toMatchObject({ verdict: 'rejected', workerId: 'liar' });
    expect(t.verifier.counts(t.store.getEvaluation(e1)!)).toBe(false);
    expect(t.quarantined).toEqual([]); // one failure is not enough

    const e2 = await t.searchResult(1, 'liar', 0.9);
    await t.finish(`${e2}-v1`, 'b', 0.6);
    await t.finish(`${e2}-v2`, 'a', 0.6);
    expect(t.quarantined).toEqual(['liar']);
    expect(t.verifier.isQuarantined('liar')).toBe(true);
    expect(t.verifier.trust.trust('a')).toMatchObject({ agreed: 2, failed: 0 });
    const kinds = t.store.events('r1').map((e) => e.kind);
    expect(kinds.filter((k) => k === 'verification-decision')).toHaveLength(4); // two asks for a third opinion, two verdicts
    expect(kinds).toContain('worker-quarantined');

    // A quarantined worker's later results never count, and its verification results are refused.
    const e3 = await t.searchResult(2, 'a', 0.7);
    expect(t.queued.get(`${e3}-v1`)!.excludeWorkers).toEqual(['a', 'liar']);
    await t.finish(`${e3}-v1`, 'liar', 0.7);
    expect(t.store.events('r1', 'verification-result-refused')).toHaveLength(1);
    expect(t.verifier.trust.getVerdict(e3)).toBeNull();
    expect(t.queued.has(`${e3}-v1`)).toBe(true); // back in the queue for another worker
  });

  it('blames a lying verifier, not the result it checked, when the third opinion sides with the result', async () => {
    const t = setup(['liar', 'a', 'b']);
    const e = await t.searchResult(0, 'a', 0.7);
    await t.finish(`${e}-v1`, 'liar', 0.99);
    await t.finish(`${e}-v2`, 'b', 0.7);
    expect(t.verifier.trust.getVerdict(e)!.verdict).toBe('confirmed');
    expect(t.verifier.trust.trust('liar')).toMatchObject({ failed: 1, agreed: 0 });
    expect(t.verifier.counts(t.store.getEvaluation(e)!)).toBe(true);
  });

  it('gives up after 10 s when no other worker is alive, and after the timeout otherwise: the result is unverified and still counts', async () => {
    const alone = setup(['a']);
    const e = await alone.searchResult(0, 'a', 0.7);
    alone.tick(5_000);
    await alone.verifier.checkTimeouts(alone.run());
    expect(alone.verifier.trust.getVerdict(e)).toBeNull();
    alone.tick(6_000);
    await alone.verifier.checkTimeouts(alone.run());
    expect(alone.verifier.trust.getVerdict(e)).toMatchObject({ verdict: 'unverified' });
    expect(alone.verifier.counts(alone.store.getEvaluation(e)!)).toBe(true);
    expect(alone.queued.size).toBe(0);

    const busy = setup(['a', 'b']);
    const e2 = await busy.searchResult(0, 'a', 0.7);
    busy.tick(60_000);
    await busy.verifier.checkTimeouts(busy.run());
    expect(busy.verifier.trust.getVerdict(e2)).toBeNull(); // b is alive: wait for it up to the timeout (100 s)
    busy.tick(41_000);
    await busy.verifier.checkTimeouts(busy.run());
    expect(busy.verifier.trust.getVerdict(e2)!.verdict).toBe('unverified');
  });

  it('holds the champion phase until every candidate has a verdict', async () => {
    const t = setup(['a', 'b']);
    const store = t.store;
    const e = await t.searchResult(0, 'a', 0.7);
    await t.finish(`${e}-v1`, 'b', 0.7); // spot check confirmed
    const job: EvaluationJob = { ...store.getEvaluation(e)!.job, evaluationId: 'r1-s1-a1', seed: 9 };
    store.addEvaluation(job, 1, 0, true);
    store.recordResult('r1-s1-a1', result('r1-s1-a1', 'b', 0.6), 0);
    const candidates = [{ sourceEvaluationId: e }, { sourceEvaluationId: 'r1-s1-a1' }];
    expect(await t.verifier.readyForChampion(t.run(), candidates)).toBe(false);
    expect([...t.queued.keys()]).toEqual(['r1-s1-a1-v1']);
    await t.finish('r1-s1-a1-v1', 'a', 0.6);
    expect(await t.verifier.readyForChampion(t.run(), candidates)).toBe(true);
  });
});
