import { describe, expect, it } from 'vitest';
import Database from 'better-sqlite3';
import { mkdtempSync, rmSync, statSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { RunStore } from './run-store.js';
import { WalCheckpointer, type CheckpointReport } from './wal-checkpointer.js';

const until = async (what: string, ok: () => boolean, ms = 10_000) => {
  const t0 = Date.now();
  while (!ok()) {
    if (Date.now() - t0 > ms) throw new Error(`timed out waiting for ${what}`);
    await new Promise((r) => setTimeout(r, 20));
  }
};

describe('background WAL checkpoints', () => {
  it('copy the log into the database file on their own thread while this connection checkpoints nothing', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'nb-ckpt-'));
    const path = join(dir, 'store.sqlite');
    try {
      const reports: CheckpointReport[] = [];
      const store = new RunStore(path, { backgroundCheckpoints: { intervalMs: 50, onCheckpoint: (r) => reports.push(r) } });
      expect(store.statement('PRAGMA wal_autocheckpoint').get()).toEqual({ wal_autocheckpoint: 0 });
      const before = statSync(path).size;
      // About 4 MB of events: over SQLite's own threshold (1,000 pages), which this connection no longer acts on.
      const detail = { method: 'PUT', url: '/filler', reason: 'x'.repeat(4000) };
      store.transaction(() => {
        for (let i = 0; i < 1000; i++) store.logEvent(null, 'rejected-request', detail);
      });
      // Only a checkpoint writes pages into the database file itself.
      await until('a complete checkpoint', () => reports.some((r) => r.log > 1000 && r.checkpointed === r.log));
      expect(statSync(path).size).toBeGreaterThan(before + 4_000_000);
      store.close();
      const reopened = new Database(path, { readonly: true });
      expect((reopened.prepare("SELECT COUNT(*) AS n FROM events WHERE kind = 'rejected-request'").get() as { n: number }).n).toBe(1000);
      reopened.close();
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });

  it('keep the log from growing while commits keep coming (it restarts from its beginning)', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'nb-ckpt-'));
    const path = join(dir, 'store.sqlite');
    try {
      const store = new RunStore(path, { backgroundCheckpoints: { intervalMs: 50 } });
      const detail = { method: 'PUT', url: '/filler', reason: 'x'.repeat(8000) };
      // Small commits, as fast as they go, letting the event loop turn every 20 of them, until four
      // times as much has been written as the log has ever held. Without restarts the log holds
      // every commit and never gets there (the deadline fails the test); with them it holds at
      // most a round's worth. How fast this machine writes and syncs sets how long that takes,
      // not whether it passes.
      const deadline = Date.now() + 20_000;
      let written = 0;
      let largestLog = 0;
      let commits = 0;
      while (Date.now() < deadline && (written < 4_000_000 || written < 4 * largestLog)) {
        store.logEvent(null, 'rejected-request', detail);
        written += detail.reason.length;
        if (++commits % 20 === 0) {
          await new Promise((r) => setTimeout(r, 1));
          largestLog = Math.max(largestLog, statSync(`${path}-wal`).size);
        }
      }
      expect(written).toBeGreaterThan(4_000_000);
      expect(largestLog, 'the log kept growing with the commits').toBeLessThanOrEqual(written / 4);
      store.close();
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  }, 30_000);

  it('report a thread that cannot open the store, so the caller checkpoints on its own connection again', async () => {
    const failures: Error[] = [];
    WalCheckpointer.start(join(tmpdir(), 'nb-no-such-dir', 'store.sqlite'), { intervalMs: 50, onFailure: (err) => failures.push(err) });
    await until('the failure', () => failures.length > 0);
    expect(failures).toHaveLength(1);
    expect(failures[0]!.message).toMatch(/background WAL checkpoint thread failed/);
  });
});
