import { describe, expect, it } from 'vitest';
import Database from 'better-sqlite3';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { RunStore } from './run-store.js';
import type { EvaluationResult, RunState } from '@netbreeder/shared-types';
import { IllegalRunTransitionError, RUN_STATES, isLegalTransition, isRunEnded } from './run-lifecycle.js';
import { heartbeat, searchJob, searchResult, storeWithRun } from './test-fixtures.js';

function storeWithOneEvaluation() {
  const store = storeWithRun();
  store.addEvaluation(searchJob('r1-s0-a1'), 0, 1000, true);
  return store;
}

const result = (over: Partial<EvaluationResult> = {}): EvaluationResult => searchResult('r1-s0-a1', 'w1', over);

describe('RunStore', () => {
  it('writes taken heartbeats before any other statement, and on their own within 50 ms', async () => {
    const store = storeWithRun();
    store.addEvaluation(searchJob('r1-s0-a1'), 0, 1, true);
    store.takeHeartbeat(heartbeat('a', { state: 'training', currentEvaluationId: 'r1-s0-a1' }), 10_000);
    // The next read sees it, the mark of the worker's evaluation as running too.
    expect(store.countLiveWorkers(5_000)).toBe(1);
    expect(store.getEvaluation('r1-s0-a1')).toMatchObject({ state: 'running', workerId: 'a' });
    // A transaction that fails does not take heartbeats taken before it down with it.
    store.takeHeartbeat(heartbeat('b'), 10_000);
    expect(() =>
      store.transaction(() => {
        store.logEvent('r1', 'run-resumed', { proposals: 0 });
        throw new Error('boom');
      }),
    ).toThrow('boom');
    expect(store.listWorkers().map((w) => w.heartbeat.workerId)).toEqual(['a', 'b']);
    // Without another statement they are written on their own: another connection sees them.
    const dir = mkdtempSync(join(tmpdir(), 'nb-hb-'));
    try {
      const onDisk = new RunStore(join(dir, 'store.sqlite'));
      onDisk.takeHeartbeat(heartbeat('c'), 10_000);
      const other = new Database(join(dir, 'store.sqlite'), { readonly: true });
      const count = () => (other.prepare('SELECT COUNT(*) AS n FROM workers').get() as { n: number }).n;
      expect(count()).toBe(0);
      // Heartbeats taken within 50 ms are written together.
      await new Promise((r) => setTimeout(r, 120));
      expect(count()).toBe(1);
      other.close();
      onDisk.close();
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });

  it("counts the last minute's results from the index by finish time alone, without reading the rows", () => {
    const store = storeWithRun();
    // The statement doneSince runs, as SQLite plans it (the store's own cached statement).
    const plan = store
      .statement(`EXPLAIN QUERY PLAN SELECT COUNT(*) AS n FROM evaluations INDEXED BY evaluations_by_run_finished WHERE run_id = ? AND finished_at >= ? AND kind = 'search' AND state = 'done'`)
      .all('r1', 0) as Array<{ detail: string }>;
    expect(plan.map((p) => p.detail).join('\n')).toContain('USING COVERING INDEX evaluations_by_run_finished');
    store.addEvaluation(searchJob('r1-s0-a1'), 0, 1000, true);
    expect(store.recordResult('r1-s0-a1', result(), 5000)).toBe('recorded');
    expect(store.doneSince('r1', 4000)).toBe(1);
    expect(store.doneSince('r1', 6000)).toBe(0);
  });

  it('counts as live the workers heard from recently that did not say they stopped, and finds one outside a list', () => {
    const store = storeWithRun();
    store.upsertWorker(heartbeat('a'), 10_000);
    store.upsertWorker(heartbeat('b'), 10_000);
    store.upsertWorker(heartbeat('old'), 1_000);
    store.upsertWorker(heartbeat('gone'), 10_000);
    store.upsertWorker(heartbeat('gone', { state: 'stopped' }), 10_001);
    expect(store.countLiveWorkers(5_000)).toBe(2);
    expect(store.hasLiveWorkerOutside(5_000, ['a'])).toBe(true);
    expect(store.hasLiveWorkerOutside(5_000, ['a', 'b'])).toBe(false);
    expect(store.hasLiveWorkerOutside(5_000, ['a', 'b', 'old', 'gone'])).toBe(false);
    store.upsertWorker(heartbeat('gone'), 10_002); // came back
    expect(store.hasLiveWorkerOutside(5_000, ['a', 'b'])).toBe(true);
  });

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

  it('checks every event against its kind when it is written: a bad detail throws and nothing is stored', () => {
    const store = new RunStore(':memory:');
    store.logEvent(null, 'worker-revoked', { workerId: 'w1', reason: 'left the office' });
    // A detail that breaks the kind's schema (a bug in the caller), typed around the check on purpose.
    expect(() => store.logEvent(null, 'worker-revoked', { workerId: 'w2' } as never)).toThrow(/invalid 'worker-revoked' event: \/reason/);
    const events = store.events(null, 'worker-revoked');
    expect(events.map((e) => e.detail.workerId)).toEqual(['w1']);
    store.close();
  });

  it('holds the write lock from the start of a transaction, so a write after a read cannot find the store locked', () => {
    const dir = mkdtempSync(join(tmpdir(), 'nb-tx-'));
    const store = new RunStore(join(dir, 'store.sqlite'));
    // Another connection that gives up at once, as SQLite does for a reader that wants to write.
    const other = new Database(join(dir, 'store.sqlite'));
    other.pragma('busy_timeout = 0');
    try {
      store.transaction(() => {
        store.getRun('r1');
        // Between the read and the write another connection cannot take the lock (the checkpoint
        // thread's RESTART waits for it), so the write that follows cannot fail with "locked".
        expect(() => other.exec('BEGIN IMMEDIATE')).toThrow(/database is locked/);
        store.logEvent(null, 'worker-revoked', { workerId: 'w', reason: 'a test' });
      });
      other.exec('BEGIN IMMEDIATE; ROLLBACK');
    } finally {
      other.close();
      store.close();
      rmSync(dir, { recursive: true, force: true });
    }
  });

  it('changes a run\'s state only as its lifecycle allows, for every (from, to) pair; a refused change changes nothing', () => {
    /** A store whose run r1 is in `state`: reached by legal changes from the state it was created in (`preparing`, never written by the coordinator, set directly). */
    const runIn = (state: RunState) => {
      const store = storeWithRun();
      if (state === 'preparing') {
        store.statement("UPDATE runs SET state = 'preparing' WHERE id = 'r1'").run();
        return store;
      }
      const paths = new Map<RunState, RunState[]>([['searching', []]]);
      for (const [from, path] of paths) for (const to of RUN_STATES) if (!paths.has(to) && isLegalTransition(from, to)) paths.set(to, [...path, to]);
      for (const step of paths.get(state)!) store.setRunState('r1', step, { now: 5000 });
      return store;
    };
    for (const from of RUN_STATES) {
      for (const to of RUN_STATES) {
        const store = runIn(from);
        expect(store.getRun('r1')!.state).toBe(from);
        const before = store.getRun('r1');
        if (isLegalTransition(from, to)) {
          store.setRunState('r1', to, { now: 9000, failure: 'why' });
          expect(store.getRun('r1')).toMatchObject({ state: to, failure: 'why' });
          // the end time is set by a change to an ended state, and kept after (a later champion round)
          if (isRunEnded(to)) expect(store.getRun('r1')!.finishedAt).toBe(9000);
          else expect(store.getRun('r1')!.finishedAt).toBe(before!.finishedAt);
        } else {
          expect(() => store.setRunState('r1', to, { now: 9000 }), `${from} → ${to}`).toThrow(IllegalRunTransitionError);
          expect(store.getRun('r1')).toEqual(before);
        }
        // A restarted coordinator resumes the run exactly while it has not ended.
        expect(store.unfinishedRun()?.id ?? null).toBe(isRunEnded(store.getRun('r1')!.state) ? null : 'r1');
        store.close();
      }
    }
    expect(() => storeWithRun().setRunState('nope', 'paused')).toThrow('no run nope');
  });
});
