import { describe, expect, it } from 'vitest';
import { EVALUATION_JOB_VERSION, EVALUATION_RESULT_VERSION, defaultSearchSpace, genomeHash, type EvaluationJob, type EvaluationResult, type Genome } from '@netbreeder/shared-types';
import { parseRunConfig } from '../config/run-config.js';
import { RunStore } from './run-store.js';

const genome: Genome = {
  schemaVersion: 1,
  nodes: [{ id: 'd1', kind: 'dense', inputs: ['input'], units: 8, activation: 'relu' }],
  output: 'd1',
  training: { optimizer: 'adam', learningRate: 0.001, batchSize: 32, weightDecay: 0, epochs: 1 },
};
const manifest = { sha256: 'a'.repeat(64), bytes: 100, inputShape: [4], numClasses: 3, classNames: ['a', 'b', 'c'], trainCount: 10, valCount: 5 };

function storeWithOneEvaluation() {
  const store = new RunStore(':memory:');
  const config = parseRunConfig({ dataset: { kind: 'demo-tiles' }, searchSpace: defaultSearchSpace() });
  store.createRun({ id: 'r1', name: 'test', config, seed: 1, dataset: { manifest, shardPath: '/nowhere', testPath: '/nowhere' }, now: 1000 });
  const hash = genomeHash(genome);
  store.putGenome({ hash, genome, params: 67, flops: 100, summary: 'dense 8' });
  const job: EvaluationJob = {
    schemaVersion: EVALUATION_JOB_VERSION, kind: 'search', evaluationId: 'r1-s0-a1', runId: 'r1', attempt: 1, genome, genomeHash: hash, seed: 3,
    budget: { epochs: 1, maxSeconds: 10 }, dataset: manifest,
  };
  store.addEvaluation(job, 0, 1000, true);
  return store;
}

const result = (over: Partial<EvaluationResult> = {}): EvaluationResult => ({
  schemaVersion: EVALUATION_RESULT_VERSION, evaluationId: 'r1-s0-a1', workerId: 'w1', backend: 'wasm', valAccuracy: 0.5, valLoss: 1, trainLoss: 1, trainAccuracy: 0.5,
  paramCount: 67, flops: 100, epochsRun: 1, samplesSeen: 10, trainSeconds: 1, samplesPerSecond: 10, peakRssBytes: 1, stoppedBy: 'epochs', history: [], ...over,
});

describe('RunStore', () => {
  it('records a result once; a second delivery is a duplicate and changes nothing', () => {
    const store = storeWithOneEvaluation();
    expect(store.recordResult('r1-s0-a1', result(), 2000)).toBe('recorded');
    expect(store.recordResult('r1-s0-a1', result({ valAccuracy: 0.9, workerId: 'w2' }), 3000)).toBe('duplicate');
    const ev = store.getEvaluation('r1-s0-a1')!;
    expect(ev.valAccuracy).toBe(0.5);
    expect(ev.workerId).toBe('w1');
    expect(store.counts('r1')).toEqual({ queued: 0, running: 0, done: 1, failed: 0 });
  });

  it('refuses results for evaluations it does not know', () => {
    const store = storeWithOneEvaluation();
    expect(store.recordResult('r1-s9-a1', result({ evaluationId: 'r1-s9-a1' }), 2000)).toBe('unknown-evaluation');
    expect(store.counts('r1')).toEqual({ queued: 1, running: 0, done: 0, failed: 0 });
  });

  it('does not let a failure overwrite a recorded result', () => {
    const store = storeWithOneEvaluation();
    store.recordResult('r1-s0-a1', result(), 2000);
    expect(store.recordFailure('r1-s0-a1', 'late failure', 3000)).toBe('duplicate');
    expect(store.getEvaluation('r1-s0-a1')!.state).toBe('done');
  });

  it('marks a queued evaluation running from a heartbeat, only once', () => {
    const store = storeWithOneEvaluation();
    expect(store.markRunning('r1-s0-a1', 'w1', 1500)).toBe(true);
    expect(store.markRunning('r1-s0-a1', 'w2', 1600)).toBe(false);
    expect(store.getEvaluation('r1-s0-a1')!.workerId).toBe('w1');
    expect(store.pendingEvaluations('r1').map((e) => e.id)).toEqual(['r1-s0-a1']);
  });

  it('rolls back every write of a failed transaction', () => {
    const store = storeWithOneEvaluation();
    expect(() =>
      store.transaction(() => {
        store.recordResult('r1-s0-a1', result(), 2000);
        throw new Error('boom');
      }),
    ).toThrow('boom');
    expect(store.getEvaluation('r1-s0-a1')!.state).toBe('queued');
  });
});
