import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { RunStore, replayRun, spawnWorker } from '@netbreeder/coordinator';
import { REDIS_URL, uniquePrefix, waitFor } from '../support/harness.js';
import { freePort, signalTree, startCoordinatorProcess, type Managed } from '../support/processes.js';
import { FAULT_LOCK_MS, FAULT_STALLED_CHECK_MS, faultWorkerArgs, writeFaultRunFile } from '../support/fault-run.js';

/**
 * The coordinator killed with SIGKILL mid-run and started again on the same store: it resumes the
 * same run (same population and counts, no second run), records the results that arrived while it
 * was down once, and queues nothing twice.
 */
describe('a coordinator killed mid-run', () => {
  const cleanup: Array<() => unknown> = [];
  afterAll(async () => {
    for (const c of cleanup.reverse()) await c();
  });

  it('resumes the same run from its store', async () => {
    const dir = await mkdtemp(join(tmpdir(), 'nb-coord-killed-'));
    cleanup.push(() => rm(dir, { recursive: true, force: true, maxRetries: 5 }));
    const port = await freePort();
    const opts = { port, dataDir: join(dir, 'data'), prefix: uniquePrefix('coord-killed'), redisUrl: REDIS_URL, tokens: { join: 'j-ck', admin: 'a-ck' }, lockMs: FAULT_LOCK_MS, stalledCheckMs: FAULT_STALLED_CHECK_MS };
    let coordinator: Managed = await startCoordinatorProcess({ ...opts, runFile: await writeFaultRunFile(dir, 16, 81) });
    cleanup.push(() => coordinator.child.kill('SIGKILL'));
    const url = `http://127.0.0.1:${port}`;
    const workers = ['k1', 'k2'].map((id) =>
      spawnWorker(['--coordinator', url, '--redis', REDIS_URL, '--prefix', opts.prefix, '--id', id, '--nice', '0', '--cache-dir', join(dir, id), ...faultWorkerArgs()], { env: { NETBREEDER_JOIN_TOKEN: 'j-ck' } }),
    );
    for (const w of workers) w.stderr?.resume(); // drain their logs so a full pipe never blocks them
    cleanup.push(() => workers.forEach((w) => signalTree(w.pid!, 'SIGKILL')));
    const store = () => new RunStore(join(opts.dataDir, 'store.sqlite'));
    const read = <T>(f: (s: RunStore) => T): T => {
      const s = store();
      try {
        return f(s);
      } finally {
        s.close();
      }
    };
    await waitFor('a few results', () => read((s) => s.listRuns()[0] && s.counts(s.listRuns()[0]!.id).done >= 4), 120_000, 250);
    signalTree(coordinator.child.pid!, 'SIGKILL');
    await coordinator.exited;
    const before = read((s) => ({ run: s.listRuns()[0]!, counts: s.counts(s.listRuns()[0]!.id) }));
    await new Promise((r) => setTimeout(r, 3000)); // workers keep finishing jobs while it is down
    coordinator = await startCoordinatorProcess(opts); // no --run: it must resume
    await waitFor('the run to finish', () => read((s) => s.getRun(before.run.id)!.state === 'finished'), 180_000, 500);
    read((s) => {
      expect(s.listRuns()).toHaveLength(1);
      expect(s.events(before.run.id, 'run-resumed').length).toBe(1);
      const search = s.evaluations(before.run.id).filter((e) => e.kind === 'search');
      const done = search.filter((e) => e.state === 'done');
      expect(new Set(done.map((e) => e.seq)).size).toBe(16);
      expect(done).toHaveLength(16);
      expect(s.getRun(before.run.id)!.proposals).toBe(16);
      expect(done.length).toBeGreaterThanOrEqual(before.counts.done);
      // Killed mid-run, it still decided exactly as the log says: the search replays from the store.
      expect(replayRun(s, before.run.id)).toMatchObject({ agree: true, disagreement: null, proposals: 16 });
    });
  }, 300_000);
});
