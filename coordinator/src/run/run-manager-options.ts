import { NetbreederError, type EvaluationResult } from '@netbreeder/shared-types';
import type { Logger } from '../logger.js';
import type { EvaluationQueue } from '../queue/evaluation-queue.js';
import type { EvaluationRecord, RunRecord, RunStore } from '../store/run-store.js';

/** How the run manager paces itself. */
export interface RunManagerOptions {
  store: RunStore;
  queue: EvaluationQueue;
  log: Logger;
  /** Folder for datasets and champion exports. */
  dataDir: string;
  /** Milliseconds between reconcile passes. @default 1000 */
  tickMs?: number;
  /**
   * How long a finished job waits for others before the pass that records it, so results that
   * arrive one by one (a thousand workers finish about a hundred jobs a second, each at its own
   * moment) share one pass and its commit instead of paying for a pass each. The queued slack
   * covers the wait: a worker that frees up finds its next job already queued. 0: a pass at once.
   * @default 50
   */
  passDelayMs?: number;
  /** A worker counts as alive while its last heartbeat is younger than this. @default 20000 */
  workerTimeoutMs?: number;
  /**
   * Evaluations kept queued beyond one per alive worker, so a worker that frees up finds its next
   * job waiting: `queueSlack` plus `queueSlackPerWorker` times the alive workers (rounded up).
   * A dozen PCs get 1 spare job; a thousand get 21, enough for the results that arrive while one
   * reconcile pass runs. More slack means proposals made from slightly older results.
   * @default 1 and 0.02
   */
  queueSlack?: number;
  queueSlackPerWorker?: number;
  /** Clock, for tests. @default Date.now */
  now?: () => number;
}

/** Events a watcher (the demo, the CLI) can follow. */
export interface RunManagerEvents {
  /** A search result once recorded; a final training's (`kind` champion) once it passed the checks, just before it is scored. */
  resultRecorded?: (evaluation: EvaluationRecord, result: EvaluationResult) => void;
  runFinished?: (run: RunRecord) => void;
}

/** What an admin can do to a run (../store/run-lifecycle.ts). */
export type { RunControl } from '../store/run-lifecycle.js';

/** A request that the run's state does not allow (pausing a finished run, say). */
export class RunStateError extends NetbreederError {
  constructor(message: string) {
    super('NB_RUN_STATE', message);
  }
}

/** A submitted genome that breaks the run's search space; `issues` says each problem. */
export class GenomeRejectedError extends NetbreederError {
  constructor(readonly issues: string[]) {
    super('NB_GENOME_REJECTED', `genome rejected: ${issues.join('; ')}`);
  }
}

/** The failure recorded for an evaluation that a finish with `discardInFlight` gave up. */
export const DISCARDED_AT_FINISH = 'run finished before this result arrived';
