import { beforeAll, describe, expect, it } from 'vitest';
import { createRandom, encodeShard, EVALUATION_RESULT_VERSION, fitReferenceNetwork, genomeHash, defaultSearchSpace, type EvaluationJob, type Genome, type LabelledSamples } from '@netbreeder/shared-types';
import { initBackend, trainGenome } from '@netbreeder/worker';
import { createLogger } from '../logger.js';
import type { EvaluationQueue } from '../queue/evaluation-queue.js';
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { parseRunConfig } from '../config/run-config.js';
import { RunStore, type EvaluationRecord } from '../store/run-store.js';
import { fixtureManifest, searchJob, searchResult } from '../store/test-fixtures.js';
import { referenceComparison } from './reference-comparison.js';
import { championFiles } from './champion-files.js';
import { ChampionPhase } from './champion-phase.js';
import { logReference } from './reference-network.js';

/**
 * The champion phase on a real (in-memory) store with real TensorFlow.js trainings on a small
 * invented task (4 features, 3 classes: the feature of the class is lit, plus noise); the queue
 * only records what it is given, and the test plays the worker with `trainGenome`.
 */
const DATA = { inputShape: fixtureManifest.inputShape, numClasses: fixtureManifest.numClasses };
function samples(count: number, seed: string): LabelledSamples {
  const rng = createRandom(seed);
  const features = new Float32Array(count * 4);
  const labels = new Int32Array(count);
  for (let i = 0; i < count; i++) {
    labels[i] = rng.int(0, 2);
    for (let f = 0; f < 4; f++) features[i * 4 + f] = (f === labels[i] ? 1 : 0) + 0.6 * rng.uniform(-1, 1);
  }
  return { features, labels, count };
}
const TRAIN = samples(120, 'train');
const TEST = samples(90, 'test');
/** The same test samples with their labels permuted: a test split no choice may notice. */
function poisoned(test: LabelledSamples): LabelledSamples {
  const labels = Int32Array.from(test.labels);
  const rng = createRandom('poison');
  for (let i = labels.length - 1; i > 0; i--) {
    const j = rng.int(0, i);
    [labels[i], labels[j]] = [labels[j]!, labels[i]!];
  }
  return { ...test, labels };
}

const dense = (units: number, lr: number): Genome => ({
  schemaVersion: 1,
  nodes: [{ id: 'd1', kind: 'dense', inputs: ['input'], units, activation: 'relu' }],
  output: 'd1',
  training: { optimizer: 'adam', learningRate: lr, batchSize: 32, weightDecay: 0, epochs: 2 },
});
const fitted = fitReferenceNetwork(DATA, defaultSearchSpace());
if (!fitted.ok) throw new Error(fitted.reason);
const reference = fitted.genome;
/** seq 0 is the reference network (the first proposal of every run), then two searched genomes. */
const SEARCH: Array<[Genome, number | null]> = [
  [reference, 0.8],
  [dense(16, 0.01), 0.9],
  [dense(8, 0.005), 0.85],
];

/** Plays the held-back check's worker side: the score a champion job's final weights get on the held-back validation samples. */
type HeldBackScore = (job: EvaluationJob) => number;

async function finishChampionPhase(testSplit: LabelledSamples, searchResults = SEARCH, eligible?: (ev: EvaluationRecord) => boolean, heldBack?: { score: HeldBackScore; referenceFirst?: boolean }) {
  // The export at the end reads the test labels from the run's test shard, as a real run's does.
  const dataDir = mkdtempSync(join(tmpdir(), 'nb-champion-'));
  const testPath = join(dataDir, 'test.shard');
  writeFileSync(testPath, encodeShard({ inputShape: [4], classNames: ['a', 'b', 'c'], train: testSplit, val: { features: new Float32Array(0), labels: new Int32Array(0), count: 0 } }));
  const store = new RunStore(':memory:');
  const config = parseRunConfig({ dataset: { kind: 'demo-tiles' }, champion: { topK: 2 } });
  store.createRun({ id: 'r1', name: 'test', config, seed: 1, dataset: { manifest: fixtureManifest, shardPath: '/nowhere', testPath }, now: 1000 });
  const run = store.getRun('r1')!;
  logReference(store, run);
  searchResults.forEach(([genome, acc], seq) => {
    const hash = genomeHash(genome);
    store.putGenome({ hash, genome, params: 100 + seq, flops: 200, summary: `genome ${seq}` });
    const job = searchJob(`r1-s${seq}-a1`, { genome, genomeHash: hash, seed: 10 + seq, budget: { epochs: 3, maxSeconds: 60 } });
    store.addEvaluation(job, seq, 1000, true);
    if (acc === null) return; // still queued when the search ended
    // A clear peak at epoch 2 (an accuracy 0.5 above the other epochs: beyond the noise of the fixture's 5 validation samples).
    const history = [1, 2, 3].map((epoch) => ({ epoch, trainLoss: 1, trainAccuracy: 0.5, valLoss: 1, valAccuracy: epoch === 2 ? acc : acc - 0.5, seconds: 1 }));
    store.recordResult(job.evaluationId, searchResult(job.evaluationId, 'w1', { valAccuracy: acc, history }), 2000 + seq);
  });
  const queued: EvaluationJob[] = [];
  const queue = { add: async (job: EvaluationJob) => void queued.push(job) } as unknown as EvaluationQueue;
  let testReads = 0;
  const phase = new ChampionPhase({ store, queue, log: createLogger('test', 'silent'), dataDir, now: () => 5000, testSplit: () => (testReads++, testSplit), ...(eligible ? { eligible } : {}) });
  await phase.begin(run);
  const readsWhenChosen = testReads;
  for (const job of heldBack?.referenceFirst ? [...queued].reverse() : queued) {
    const outcome = await trainGenome({ genome: job.genome, data: DATA, train: TRAIN, val: null, budget: job.budget, seed: job.seed, exportModel: true });
    const valAccuracy = heldBack && job.selectionHoldout ? heldBack.score(job) : outcome.valAccuracy;
    await phase.recordResult(store.getEvaluation(job.evaluationId)!, { schemaVersion: EVALUATION_RESULT_VERSION, evaluationId: job.evaluationId, workerId: 'w1', ...outcome, valAccuracy });
  }
  return { store, queued, readsWhenChosen, testReads };
}

beforeAll(async () => {
  await initBackend();
});

describe('the champion is chosen without the test split', () => {
  it('chooses the same champion, and trains the same jobs, whatever the test labels say', async () => {
    const clean = await finishChampionPhase(TEST);
    const poison = await finishChampionPhase(poisoned(TEST));
    expect(clean.readsWhenChosen).toBe(0); // the choice is made before any test score exists
    for (const r of [clean, poison]) {
      expect(r.store.getChampion('r1')!.genomeHash).toBe(genomeHash(SEARCH[1]![0]));
      // the champion and the reference network, one final training each, and nothing else
      expect(r.queued.map((j) => j.genomeHash)).toEqual([genomeHash(SEARCH[1]![0]), genomeHash(reference)]);
      expect(r.testReads).toBe(2); // one test score per final training
    }
    expect(poison.queued.map((j) => [j.evaluationId, j.seed, j.budget.epochs])).toEqual(clean.queued.map((j) => [j.evaluationId, j.seed, j.budget.epochs]));
    // The poisoned labels do change the scores: the test split was really read, once per model.
    expect(poison.store.getChampion('r1')!.testAccuracy).not.toBe(clean.store.getChampion('r1')!.testAccuracy);
  }, 120_000);

  it('trains the reference exactly as the champion (train + validation, learning-curve length, its own search seed) and compares them in one line', async () => {
    const { store, queued } = await finishChampionPhase(TEST);
    const [champion, ref] = queued;
    expect(champion!.kind).toBe('champion');
    expect(ref!.kind).toBe('champion');
    // Both histories peak at epoch 2, so both final trainings get 2 epochs; each keeps the seed of its search result.
    expect([champion!.budget.epochs, ref!.budget.epochs]).toEqual([2, 2]);
    expect([champion!.seed, ref!.seed]).toEqual([11, 10]);
    const lengths = store.events('r1', 'champion-training-length').map((e) => e.detail as { rule: string; epochs: number });
    expect(lengths).toEqual([expect.objectContaining({ rule: 'learning-curve', epochs: 2 }), expect.objectContaining({ rule: 'learning-curve', epochs: 2 })]);
    const comparison = referenceComparison(store, 'r1');
    expect(comparison.state).toBe('scored');
    const points = (comparison.championTestAccuracy! - comparison.referenceTestAccuracy!) * 100;
    const report = championFiles(store, store.getRun('r1')!)!.get('report.md')!.toString();
    expect(report).toContain(comparison.line.slice(1));
    expect(report).toMatch(/The choice read validation scores only/);
    expect(report).toMatch(/for 2 epoch\(s\), where its longest search training \(3 epochs\) reached its best validation accuracy/);
    expect(report).not.toMatch(/optimistic/);
    // per-class figures and the majority-class baseline beside the accuracy (the demo-tiles fixture records no training counts, so the test split's)
    expect(report).toMatch(/## Test split: per class[\s\S]*\| a \| (\d\.\d{3}|n\/a) \| (\d\.\d{3}|n\/a) \|/);
    expect(report).toMatch(/\| always predicting the most common class \("[abc]", counted on the test split\) \| \d+\.\d\d% on the same test samples \|/);
    const html = championFiles(store, store.getRun('r1')!)!.get('report.html')!.toString();
    expect(html).toContain('<h2>Test split: per class</h2>');
    expect(comparison.line).toMatch(points > 0 ? /the search's champion beats the reference network by [\d.]+ points/ : points < 0 ? /chosen on validation, scores [\d.]+ points below the reference network/ : /ties/);
  }, 120_000);

  it('still trains the reference when its search result does not count, without reading the learning curve of that result', async () => {
    // The reference's result (seq 0) "came from a quarantined worker": it may not compete, and
    // its curve may be a lie, but the reference is trained in any case.
    const { store, queued } = await finishChampionPhase(TEST, [[reference, 0.99], SEARCH[1]!, SEARCH[2]!], (ev) => ev.seq !== 0);
    expect(queued.map((j) => j.genomeHash)).toEqual([genomeHash(SEARCH[1]![0]), genomeHash(reference)]);
    const round = store.events('r1', 'champion-candidates')[0]!.detail as { considered: Array<{ genomeHash: string }> };
    expect(round.considered.map((c) => c.genomeHash)).not.toContain(genomeHash(reference));
    const lengths = store.events('r1', 'champion-training-length').map((e) => e.detail as { rule: string; epochs: number });
    expect(lengths).toEqual([expect.objectContaining({ rule: 'learning-curve', epochs: 2 }), expect.objectContaining({ rule: 'genome-epochs', epochs: 3 })]);
  }, 120_000);

  it('gives a reference whose search training never finished no final training, and says why', async () => {
    const { store, queued } = await finishChampionPhase(TEST, [[reference, null], SEARCH[1]!, SEARCH[2]!]);
    expect(queued.map((j) => j.genomeHash)).toEqual([genomeHash(SEARCH[1]![0])]);
    expect(queued[0]!.selectionHoldout).toBeUndefined(); // nothing to compare with
    expect(referenceComparison(store, 'r1')).toMatchObject({ state: 'skipped', line: expect.stringMatching(/had not finished when the search budget ran out/) });
  }, 120_000);

  it('trains the reference once when it is the champion, and says the search did not beat it', async () => {
    const { store, queued } = await finishChampionPhase(TEST, [[reference, 0.95], SEARCH[1]!, SEARCH[2]!]);
    expect(queued.map((j) => j.genomeHash)).toEqual([genomeHash(reference)]);
    expect(referenceComparison(store, 'r1')).toMatchObject({ state: 'scored', championIsReference: true, line: expect.stringMatching(/^the search did not beat the reference network; it is exported as the champion/) });
  }, 120_000);
});

describe('the held-back check: the champion against the reference network after equal final trainings', () => {
  const isReference = (job: EvaluationJob) => job.genomeHash === genomeHash(reference);

  it('holds the same validation samples back from both final trainings, and from nothing else', async () => {
    const { queued } = await finishChampionPhase(TEST);
    // champion.selectionShare 0.5 of the fixture's validation split
    const half = Math.floor(fixtureManifest.valCount * 0.5);
    expect(queued.map((j) => j.selectionHoldout)).toEqual([half, half]);
  }, 120_000);

  for (const referenceFirst of [false, true]) {
    it(`exports the reference network when it scores higher on the held-back samples (${referenceFirst ? 'its' : "the champion's"} result first), and says so`, async () => {
      const { store } = await finishChampionPhase(TEST, SEARCH, undefined, { score: (job) => (isReference(job) ? 0.9 : 0.6), referenceFirst });
      expect(store.getChampion('r1')!.genomeHash).toBe(genomeHash(reference));
      const check = store.events('r1', 'champion-held-back-check').map((e) => e.detail);
      expect(check).toEqual([expect.objectContaining({ exported: 'reference', round: 0, champion: expect.objectContaining({ valAccuracy: 0.6 }), reference: expect.objectContaining({ valAccuracy: 0.9 }) })]);
      expect(referenceComparison(store, 'r1')).toMatchObject({ championIsReference: true });
      const report = championFiles(store, store.getRun('r1')!)!.get('report.md')!.toString();
      expect(report).toMatch(/so the reference network is exported as the champion/);
    }, 120_000);
  }

  it("keeps the search's champion on a tie or a better score, whichever result comes first", async () => {
    for (const [score, referenceFirst] of [[0.7, false], [0.7, true], [0.5, true]] as const) {
      const { store } = await finishChampionPhase(TEST, SEARCH, undefined, { score: (job) => (isReference(job) ? score : 0.7), referenceFirst });
      expect(store.getChampion('r1')!.genomeHash).toBe(genomeHash(SEARCH[1]![0]));
      expect(store.events('r1', 'champion-held-back-check').map((e) => e.detail.exported)).toEqual(['search']);
    }
  }, 120_000);
});
