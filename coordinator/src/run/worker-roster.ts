import { NetbreederError, type WorkerHeartbeat } from '@netbreeder/shared-types';
import type { Logger } from '../logger.js';
import type { RunStore } from '../store/run-store.js';

/**
 * The workers as the coordinator knows them: their heartbeats (written by the store with the
 * others of the same moment), who counts as alive, and who is revoked (an admin's decision, kept
 * in the event log: every later result and heartbeat of that worker is refused).
 */
export class WorkerRoster {
  private revoked: Set<string> | null = null;

  constructor(
    private readonly o: {
      store: RunStore;
      log: Logger;
      now: () => number;
      /** A worker counts as alive while its last heartbeat is younger than this. */
      workerTimeoutMs: number;
    },
  ) {}

  /** Takes a worker's heartbeat (refused for a revoked worker); the store writes it with the others of this moment (`RunStore.takeHeartbeat`). */
  recordHeartbeat(hb: WorkerHeartbeat): void {
    if (this.isRevoked(hb.workerId)) throw new NetbreederError('NB_WORKER_REVOKED', `worker ${hb.workerId} is revoked`);
    this.o.store.takeHeartbeat(hb, this.o.now());
  }

  /** Workers whose last heartbeat is recent enough. */
  aliveCount(): number {
    return this.o.store.countLiveWorkers(this.aliveSince());
  }

  /** The oldest last heartbeat that still counts as alive. */
  aliveSince(): number {
    return this.o.now() - this.o.workerTimeoutMs;
  }

  isAlive(lastSeenAt: number): boolean {
    return lastSeenAt >= this.aliveSince();
  }

  /** True when results and heartbeats of this worker are refused. */
  isRevoked(workerId: string): boolean {
    return this.revokedIds().has(workerId);
  }

  /** The workers whose results and heartbeats are refused (read from the event log once). */
  revokedIds(): Set<string> {
    this.revoked ??= new Set(this.o.store.events(null, 'worker-revoked').map((e) => e.detail.workerId));
    return this.revoked;
  }

  /** Refuses every later result and heartbeat of `workerId` (a PC that misbehaves or left the office). */
  revoke(workerId: string, reason: string): void {
    if (this.isRevoked(workerId)) return;
    this.o.store.logEvent(null, 'worker-revoked', { workerId, reason });
    this.revokedIds().add(workerId);
    this.o.log.warn({ workerId, reason }, 'worker revoked; its results will be refused');
  }
}
