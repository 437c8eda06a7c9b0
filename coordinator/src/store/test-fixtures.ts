import {
  EVALUATION_JOB_VERSION,
  EVALUATION_RESULT_VERSION,
  defaultSearchSpace,
  genomeHash,
  type EvaluationJob,
  type EvaluationResult,
  type Genome,
  type WorkerHeartbeat,
} from '@netbreeder/shared-types';
import { parseRunConfig } from '../config/run-config.js';
import { RunStore } from './run-store.js';

/** Shared by the store's unit tests and those of the code on top of it (verification, accounting). */

/** A one-layer genome of 67 parameters on 4 features and 3 classes. */
export const fixtureGenome: Genome = {
  schemaVersion: 1,
  nodes: [{ id: 'd1', kind: 'dense', inputs: ['input'], units: 8, activation: 'relu' }],
  output: 'd1',
  training: { optimizer: 'adam', learningRate: 0.001, batchSize: 32, weightDecay: 0, epochs: 1 },
};
export const fixtureHash = genomeHash(fixtureGenome);
export const fixtureManifest = { sha256: 'a'.repeat(64), bytes: 100, inputShape: [4], numClasses: 3, classNames: ['a', 'b', 'c'], trainCount: 10, valCount: 5 };

/** A search job of run `r1` for the fixture genome. */
export const searchJob = (evaluationId: string, over: Partial<EvaluationJob> = {}): EvaluationJob => ({
  schemaVersion: EVALUATION_JOB_VERSION,
  kind: 'search',
  evaluationId,
  runId: 'r1',
  attempt: 1,
  genome: fixtureGenome,
  genomeHash: fixtureHash,
  seed: 3,
  budget: { epochs: 1, maxSeconds: 10 },
  dataset: fixtureManifest,
  ...over,
});

/** A plausible search result (validation accuracy 0.5) of `workerId` for `evaluationId`. */
export const searchResult = (evaluationId: string, workerId: string, over: Partial<EvaluationResult> = {}): EvaluationResult => ({
  schemaVersion: EVALUATION_RESULT_VERSION,
  evaluationId,
  workerId,
  backend: 'wasm',
  valAccuracy: 0.5,
  valLoss: 1,
  trainLoss: 1,
  trainAccuracy: 0.5,
  paramCount: 67,
  flops: 100,
  epochsRun: 1,
  samplesSeen: 10,
  trainSeconds: 1,
  samplesPerSecond: 10,
  peakRssBytes: 1,
  stoppedBy: 'epochs',
  history: [],
  ...over,
});

/** A store (in memory unless a file `path` is given) holding run `r1` (demo tiles, the default search space and `config` on top) and the fixture genome. */
export function storeWithRun(config: Record<string, unknown> = {}, createdAt = 1000, path = ':memory:'): RunStore {
  const store = new RunStore(path);
  const parsed = parseRunConfig({ dataset: { kind: 'demo-tiles' }, searchSpace: defaultSearchSpace(), ...config });
  store.createRun({ id: 'r1', name: 'test', config: parsed, seed: 1, dataset: { manifest: fixtureManifest, shardPath: '/nowhere', testPath: '/nowhere' }, now: createdAt });
  store.putGenome({ hash: fixtureHash, genome: fixtureGenome, params: 67, flops: 100, summary: 'dense 8' });
  return store;
}

/** An idle worker's heartbeat (`over` on top: watts, a state, …). */
export const heartbeat = (workerId: string, over: Partial<WorkerHeartbeat> = {}): WorkerHeartbeat => ({
  schemaVersion: 1, workerId, host: 'pc', pid: 1, cores: 2, backend: 'wasm', backendReason: '', state: 'idle', currentEvaluationId: null, evaluationsDone: 0, evaluationsFailed: 0,
  samplesPerSecond: 0, rssBytes: 1, memoryCapMb: 100, version: 't', ...over,
});
