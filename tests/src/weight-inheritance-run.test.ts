import { afterAll, describe, expect, it } from 'vitest';
import { championFiles, parseRunConfig } from '@netbreeder/coordinator';
import { defaultSearchSpace } from '@netbreeder/shared-types';
import { TestCluster, waitFor } from './support/harness.js';

/**
 * Weight inheritance through the real coordinator, queue and workers (`search.weightInheritance`):
 * with asha-evolution, a candidate promoted to a higher rung continues from its own final
 * checkpoint of the lower rung and trains only the extra epochs; a child of evolution starts from
 * its parent's final weights where layer names and shapes match; the final trainings of the
 * champion phase start from their search training's final weights. The champion report says which.
 */
describe('a run with weight inheritance', () => {
  let cluster: TestCluster;
  afterAll(async () => {
    await cluster?.stop();
  });

  it('continues promoted candidates from their lower-rung checkpoint and starts children from their parent', async () => {
    cluster = await TestCluster.start('inherit');
    cluster.spawnWorker('i1');
    cluster.spawnWorker('i2');
    await cluster.waitForReadyWorkers(2);
    const config = parseRunConfig({
      name: 'inheritance',
      seed: 12,
      dataset: { kind: 'demo-tiles', samplesPerClass: 60, seed: 12 },
      search: { algorithm: 'asha-evolution', populationSize: 4, sampleSize: 2, eta: 2, minEpochs: 1, maxEpochs: 4, weightInheritance: true },
      budget: { maxEvaluations: 14, maxMinutes: 10 },
      evaluation: { checkpointEveryEpochs: 0 },
      champion: { epochs: 2, topK: 1 },
      searchSpace: { ...defaultSearchSpace(), maxFlops: 1_000_000, filters: { min: 4, max: 8 }, units: { min: 8, max: 32 } },
    });
    const run = await cluster.coordinator.startRun(config);
    const store = cluster.coordinator.store;
    await waitFor('the run to finish', () => ['finished', 'failed'].includes(store.getRun(run.id)!.state), 240_000, 250);
    expect(store.getRun(run.id)!.state, store.getRun(run.id)!.failure ?? '').toBe('finished');
    const done = store.evaluations(run.id).filter((e) => e.kind === 'search' && e.state === 'done');
    const byId = new Map(store.evaluations(run.id).map((e) => [e.id, e]));

    // Promotions (budget above rung 0): each continues its own lower-rung evaluation's final checkpoint.
    const promoted = done.filter((e) => e.job.budget.epochs > 1);
    expect(promoted.length).toBeGreaterThan(0);
    for (const p of promoted) {
      expect(p.job.inherit?.kind, p.id).toBe('own-checkpoint');
      const lower = byId.get(p.job.inherit!.checkpoint.evaluationId)!;
      expect(lower.genomeHash).toBe(p.genomeHash);
      expect(lower.job.budget.epochs).toBeLessThan(p.job.budget.epochs);
      expect(p.job.inherit!.checkpoint.epoch).toBe(lower.job.budget.epochs);
      const start = p.result!.start!;
      expect(start).toMatchObject({ kind: 'own-checkpoint', fromEpoch: lower.job.budget.epochs, fromEvaluationId: lower.id, note: null });
      // It trained only the extra epochs: the lower rung's curve, then epochs fromEpoch+1 .. budget.
      expect(p.result!.history.map((h) => h.epoch)).toEqual(Array.from({ length: p.job.budget.epochs }, (_, i) => i + 1));
      expect(p.result!.history.slice(0, start.fromEpoch)).toEqual(lower.result!.history);
    }

    // Children of evolution at rung 0 whose parent had finished: they start from the parent's weights.
    const children = done.filter((e) => e.job.budget.epochs === 1 && e.job.inherit);
    const steps = store.searchSteps(run.id);
    expect(children.length).toBeGreaterThan(0);
    for (const c of children) {
      expect(c.job.inherit!.kind).toBe('parent-weights');
      const start = c.result!.start!;
      expect(start.kind).toBe('parent-weights');
      expect(start.fromEpoch).toBe(0);
      expect(start.copiedWeights).toBeLessThanOrEqual(start.totalWeights);
      // The parent of this very proposal (in a small space the same child can come from two
      // parents, so the genome's first recorded lineage may name the other one).
      const proposal = steps.find((st) => st.kind === 'propose' && st.evaluationId === `${run.id}-s${c.seq}-a1`)!;
      expect(byId.get(start.fromEvaluationId!)!.genomeHash).toBe(proposal.parentHashes[0]);
    }
    // A mutation changes one or two layers: most children share some weights with their parent.
    expect(children.some((c) => c.result!.start!.copiedWeights > 0)).toBe(true);
    // Fresh members have no parent to inherit from.
    expect(done.filter((e) => !e.job.inherit).every((e) => e.result!.start!.kind === 'fresh')).toBe(true);

    // The final trainings (the champion's and the reference network's, for the held-back check)
    // start from the weights their genome's search training ended with (`champion.warmStart`, on
    // by default): every weight copied, a fresh optimizer, the whole final length from epoch 0.
    const finals = store.evaluations(run.id).filter((e) => e.kind === 'champion' && e.state === 'done');
    expect(finals.length).toBeGreaterThan(0);
    const lengths = store.events(run.id, 'champion-training-length').map((e) => e.detail);
    for (const f of finals) {
      const source = byId.get(lengths.find((l) => l.evaluationId === f.id)!.sourceEvaluationId)!;
      expect(f.job.inherit, f.id).toMatchObject({ kind: 'parent-weights', checkpoint: { evaluationId: source.id, epoch: source.job.budget.epochs } });
      const start = f.result!.start!;
      expect(start).toMatchObject({ kind: 'parent-weights', fromEpoch: 0, fromEvaluationId: source.id, note: null });
      expect(start.copiedWeights).toBe(start.totalWeights);
      expect(f.result!.history.map((h) => h.epoch)).toEqual(Array.from({ length: f.job.budget.epochs }, (_, i) => i + 1));
      expect(lengths.find((l) => l.evaluationId === f.id)!.startsFrom).toEqual({ kind: 'search-weights', epochs: source.job.budget.epochs });
    }

    const report = championFiles(store, store.getRun(run.id)!)!.get('report.md')!.toString();
    expect(report).toContain('starting from the weights its search training ended with');
    expect(report).toContain('## Checkpoints and weight inheritance');
    expect(report).toContain(`${promoted.length} continued their own lower-rung checkpoint and ${children.length} started from their parent's weights`);
  }, 300_000);
});
