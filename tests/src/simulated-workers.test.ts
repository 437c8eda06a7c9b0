import { join } from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { pino } from 'pino';
import { parseRunConfig, type RunRecord } from '@netbreeder/coordinator';
import { SimulatedFleet, resolveWorkerOptions, type FleetStats } from '@netbreeder/worker';
import { REDIS_URL, TestCluster, waitFor } from './support/harness.js';

/**
 * Simulated workers (test and benchmark mode) against the real coordinator, store, queue and HTTP:
 * 50 of them in this one process complete a real run of 100 search evaluations and the champion
 * job, each evaluation recorded once; with a drop rate, every abandoned job comes back through the
 * stalled check (or as a reissued attempt) and its proposal is still recorded exactly once.
 */
const EVALUATIONS = 100;
const AGENTS = 50;

async function simulatedRun(name: string, dropRate: number): Promise<{ cluster: TestCluster; run: RunRecord; stats: FleetStats }> {
  // A short lock so an abandoned job returns within seconds (the coordinator checks at the same pace).
  const cluster = await TestCluster.start(name, { lockDurationMs: 2000, stalledIntervalMs: 1000 });
  clusters.push(cluster);
  const fleet = new SimulatedFleet(
    {
      worker: resolveWorkerOptions({
        coordinatorUrl: cluster.coordinator.url,
        redisUrl: REDIS_URL,
        prefix: cluster.prefix,
        workerId: `${name}`,
        cacheDir: join(cluster.dataDir, 'sim-cache'),
        joinToken: cluster.coordinator.secrets.joinToken,
        nice: 0,
        heartbeatMs: 2000,
        lockDurationMs: 2000,
        stalledIntervalMs: 1000,
      }),
      simulation: { meanSeconds: 0.2, sigma: 0.5, dropRate, seed: `${name}-seed` },
      count: AGENTS,
    },
    pino({ level: process.env.NETBREEDER_LOG_LEVEL ?? 'warn' }),
  );
  fleets.push(fleet);
  await fleet.start();
  await cluster.waitForReadyWorkers(AGENTS);
  const config = parseRunConfig({
    name,
    seed: 11,
    dataset: { kind: 'demo-tiles', samplesPerClass: 20, seed: 11 },
    search: { algorithm: 'aging-evolution', populationSize: 20, sampleSize: 5 },
    budget: { maxEvaluations: EVALUATIONS, maxMinutes: 10 },
    evaluation: { maxSeconds: 30, maxAttempts: 5 },
    champion: { epochs: 1, maxSeconds: 30 },
  });
  const run = await cluster.coordinator.startRun(config);
  await waitFor('the simulated run to end', () => ['finished', 'failed'].includes(cluster.coordinator.store.getRun(run.id)!.state), 150_000, 250);
  return { cluster, run, stats: fleet.snapshot() };
}

const clusters: TestCluster[] = [];
const fleets: SimulatedFleet[] = [];

afterEach(async () => {
  for (const f of fleets.splice(0)) await f.stop({ force: true });
  for (const c of clusters.splice(0)) await c.stop();
});

/** Every proposal has exactly one done search evaluation; nothing is owed. */
function expectEachRecordedOnce(cluster: TestCluster, run: RunRecord): void {
  const store = cluster.coordinator.store;
  const finalRun = store.getRun(run.id)!;
  expect(finalRun.state, finalRun.failure ?? '').toBe('finished');
  expect(finalRun.proposals).toBe(EVALUATIONS);
  const search = store.evaluations(run.id).filter((e) => e.kind === 'search');
  const done = search.filter((e) => e.state === 'done');
  const seqs = done.map((e) => e.seq).sort((a, b) => a - b);
  expect(seqs).toEqual(Array.from({ length: EVALUATIONS }, (_, i) => i));
  expect(store.counts(run.id).done).toBe(EVALUATIONS);
  expect(store.counts(run.id).queued + store.counts(run.id).running).toBe(0);
  for (const e of done) {
    expect(e.result!.backend).toBe('cpu');
    expect(e.result!.evaluationId).toBe(e.id);
  }
}

describe('simulated workers', () => {
  it('50 in one process complete a real run of 100 evaluations, each recorded once', async () => {
    const { cluster, run, stats } = await simulatedRun('sim', 0);
    expectEachRecordedOnce(cluster, run);
    const store = cluster.coordinator.store;
    const done = store.evaluations(run.id).filter((e) => e.kind === 'search' && e.state === 'done');
    // Many distinct simulated workers took part, each under its own id.
    expect(new Set(done.map((e) => e.workerId)).size).toBeGreaterThan(10);
    expect(store.listWorkers().length).toBe(AGENTS);
    expect(stats.dropped).toBe(0);
    // Nothing failed, so nothing was reissued.
    expect(store.events(run.id, 'reissued')).toHaveLength(0);
    expect(store.getChampion(run.id)).not.toBeNull();
  }, 200_000);

  it('with a drop rate, every abandoned job is taken over and its proposal recorded once', async () => {
    const { cluster, run, stats } = await simulatedRun('simdrop', 0.1);
    expectEachRecordedOnce(cluster, run);
    expect(stats.dropped).toBeGreaterThan(0);
    const store = cluster.coordinator.store;
    // Each drop left a job that another worker finished (a stalled job restarts under the same
    // evaluation id; after two stalls the coordinator reissues it as the next attempt).
    const started = stats.started;
    const searchDone = store.counts(run.id).done;
    expect(started).toBeGreaterThanOrEqual(searchDone + stats.dropped);
    // The champion training can be dropped too: its reissue is in the same event log, its failed
    // attempt in the champion counts.
    const reissued = store.events(run.id, 'reissued').length;
    const failed = store.counts(run.id, 'search').failed + store.counts(run.id, 'champion').failed;
    expect(reissued).toBe(failed); // every failed attempt had a successor (maxAttempts 5 was never reached)
  }, 200_000);
});
