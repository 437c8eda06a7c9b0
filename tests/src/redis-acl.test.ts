import { randomBytes } from 'node:crypto';
import { Redis } from 'ioredis';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { parseRunConfig } from '@netbreeder/coordinator';
import { defaultSearchSpace } from '@netbreeder/shared-types';
import { REDIS_URL, TestCluster, waitFor } from './support/harness.js';
import { workerAclRules } from './support/worker-acl.js';

/**
 * Workers on office PCs should not hold Redis's admin password. docs/operating.md documents a Redis ACL
 * user limited to the search's key prefix and the commands BullMQ needs; this test creates exactly
 * that user on the real Redis, runs a worker with it through a real run, and checks what the user
 * may not do.
 */
describe('a worker with a restricted Redis ACL user', () => {
  let cluster: TestCluster;
  const user = `nbtest-worker-${randomBytes(3).toString('hex')}`;
  const password = randomBytes(12).toString('hex');
  const admin = new Redis(REDIS_URL);

  beforeAll(async () => {
    cluster = await TestCluster.start('acl');
    await admin.call('ACL', 'SETUSER', user, ...workerAclRules(cluster.prefix, password));
  });
  afterAll(async () => {
    await admin.call('ACL', 'DELUSER', user);
    admin.disconnect();
    await cluster?.stop();
  });

  it('can do all a worker does', async () => {
    const url = new URL(REDIS_URL);
    url.username = user;
    url.password = password;
    cluster.spawnWorker('acl-worker', ['--redis', url.toString()]);
    const config = parseRunConfig({
      name: 'acl',
      dataset: { kind: 'demo-tiles', samplesPerClass: 20 },
      search: { populationSize: 3, sampleSize: 2 },
      budget: { maxEvaluations: 3 },
      champion: { epochs: 2, topK: 1 },
      searchSpace: { ...defaultSearchSpace(), epochs: { min: 1, max: 2 } },
    });
    const run = await cluster.coordinator.startRun(config);
    await waitFor('the run to finish', () => cluster.coordinator.store.getRun(run.id)!.state === 'finished', 120_000, 250);
    const done = cluster.coordinator.store.evaluations(run.id).filter((e) => e.state === 'done');
    // three search evaluations, then the final trainings of the champion and the reference network
    // (one when the reference is the search's champion)
    const candidates = cluster.coordinator.store.events(run.id, 'champion-candidates').at(-1)!.detail.candidates;
    expect(done.filter((e) => e.kind === 'search')).toHaveLength(3);
    expect(done.filter((e) => e.kind === 'champion')).toHaveLength(candidates.length);
    expect(candidates.length).toBeLessThanOrEqual(2);
    expect(done.every((e) => e.result!.workerId === 'acl-worker')).toBe(true);
  }, 180_000);

  it('cannot touch keys outside its prefix, or run admin commands', async () => {
    const r = new Redis({ host: new URL(REDIS_URL).hostname, port: Number(new URL(REDIS_URL).port || 6379), username: user, password, maxRetriesPerRequest: 1 });
    try {
      await expect(r.get('some-other-app:secret')).rejects.toThrow(/NOPERM/);
      await expect(r.set(`${cluster.prefix}x:intruder`, '1')).rejects.toThrow(/NOPERM/);
      await expect(r.flushall()).rejects.toThrow(/NOPERM/);
      await expect(r.call('CONFIG', 'GET', 'dir')).rejects.toThrow(/NOPERM/);
      await expect(r.keys('*')).rejects.toThrow(/NOPERM/);
      // …while its own prefix is open to it
      expect(await r.set(`${cluster.prefix}:acl-probe`, '1')).toBe('OK');
      expect(await r.del(`${cluster.prefix}:acl-probe`)).toBe(1);
    } finally {
      r.disconnect();
    }
  });
});
