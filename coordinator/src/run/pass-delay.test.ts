import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { parseRunConfig } from '../config/run-config.js';
import { createLogger } from '../logger.js';
import type { EvaluationQueue } from '../queue/evaluation-queue.js';
import { RunStore } from '../store/run-store.js';
import { RunManager } from './run-manager.js';

const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

/**
 * A queue that holds nothing and counts the passes (each pass reads the finished jobs once);
 * `finish()` is what BullMQ's completed event would call.
 */
function countingQueue() {
  const state = { passes: 0, finish: () => {} };
  const queue = {
    add: async () => {},
    addMany: async () => {},
    has: async () => false,
    finished: async () => {
      state.passes++;
      return [];
    },
    remove: async () => {},
    removeMany: async () => {},
    checkMarker: async () => 'present',
    watch: async (onFinish: () => void) => {
      state.finish = onFinish;
    },
  } as unknown as EvaluationQueue;
  return { queue, state };
}

const dirs: string[] = [];
afterEach(async () => {
  for (const dir of dirs.splice(0)) await rm(dir, { recursive: true, force: true });
});

async function managerWith(passDelayMs: number) {
  const dataDir = await mkdtemp(join(tmpdir(), 'nb-pass-delay-'));
  dirs.push(dataDir);
  const { queue, state } = countingQueue();
  const manager = new RunManager({ store: new RunStore(':memory:'), queue, log: createLogger('coordinator', 'silent'), dataDir, tickMs: 3_600_000, passDelayMs });
  await manager.startRun(parseRunConfig({ name: 'pass-delay', dataset: { kind: 'demo-tiles', samplesPerClass: 10, seed: 1 } }));
  await manager.startLoop(); // its first pass
  return { manager, state };
}

describe('the reconcile pass after finished jobs', () => {
  it('waits passDelayMs, and the jobs that finish meanwhile share that one pass', async () => {
    const { manager, state } = await managerWith(50);
    const before = state.passes;
    for (let i = 0; i < 10; i++) state.finish();
    await sleep(10);
    expect(state.passes).toBe(before); // still waiting for others
    await sleep(100);
    expect(state.passes).toBe(before + 1);
    await manager.stopLoop();
  });

  it('with passDelayMs 0 passes at once for each job that finishes while none runs', async () => {
    const { manager, state } = await managerWith(0);
    const before = state.passes;
    state.finish();
    expect(state.passes).toBe(before + 1);
    await manager.stopLoop();
  });

  it('leaves no pass waiting once the loop has stopped', async () => {
    const { manager, state } = await managerWith(50);
    const before = state.passes;
    state.finish();
    await manager.stopLoop();
    await sleep(100);
    expect(state.passes).toBe(before);
  });
});
