import { afterAll, describe, expect, it } from 'vitest';
import type { RunConfig } from '@netbreeder/shared-types';
import { TrustStore } from '@netbreeder/coordinator';
import { TestCluster, waitFor } from './support/harness.js';
import { smallRunConfig } from './support/small-run.js';

/**
 * With one worker nobody can verify the champion candidate: the verification gives up (here after
 * the 10 s it waits when no other worker is alive, well before its 600 s timeout), the run still
 * finishes, and the report says the champion's result is unverified.
 */
describe('verification with a single worker', () => {
  let cluster: TestCluster;
  afterAll(async () => {
    await cluster?.stop();
  });

  it('does not hang: the candidate is marked unverified and the champion is still trained', async () => {
    cluster = await TestCluster.start('verify-one');
    const config: RunConfig = {
      ...smallRunConfig('one worker', 3, 31),
      champion: { epochs: 3, maxSeconds: 60, topK: 1 },
      verification: { spotCheckFraction: 0, championCandidates: true, timeoutSeconds: 600, quarantineAfterFailures: 2, quarantineBelowReliability: 0.5 },
    };
    cluster.spawnWorker('alone');
    await cluster.waitForReadyWorkers(1);
    const store = cluster.coordinator.store;
    const run = await cluster.coordinator.startRun(config);
    await waitFor('the run to finish', () => ['finished', 'failed'].includes(store.getRun(run.id)!.state), 180_000, 500);
    expect(store.getRun(run.id)!.state).toBe('finished');

    const champion = store.getChampion(run.id)!;
    const verdict = new TrustStore(store).getVerdict(champion.sourceEvaluationId)!;
    expect(verdict.verdict).toBe('unverified');
    const ended = store.events(run.id, 'verification-ended').map((e) => e.detail as { state: string; reason: string });
    expect(ended).toEqual([expect.objectContaining({ state: 'timed-out', reason: 'no worker other than the excluded ones is alive' })]);
    const md = await (
      await fetch(`${cluster.coordinator.url}/runs/${run.id}/champion/files/report.md`, { headers: { authorization: `Bearer ${cluster.coordinator.secrets.adminToken}` } })
    ).text();
    expect(md).toMatch(/verification of its search result \| unverified: no other worker re-ran it in time/);
  }, 240_000);
});
