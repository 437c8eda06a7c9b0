import { Worker } from 'bullmq';
import type { Logger } from '../logger.js';
import { openRedis, type QueueLocation } from '@netbreeder/worker';

/** Timing of the coordinator's own stalled-job check. Must match the workers' lock settings. */
export interface StallCheckOptions {
  /** How often to look for jobs whose worker vanished. @default 15000 */
  stalledIntervalMs: number;
  /** Lock length the workers use. @default 30000 */
  lockDurationMs: number;
}

/**
 * Runs BullMQ's stalled-job check from the coordinator, so a vanished worker's job returns to the
 * queue even when no other worker is alive to run the check. It never takes jobs itself (a worker
 * with no processor, never started). A job whose lock expired goes back to waiting once; the
 * second time it is failed by BullMQ and the run manager reissues it as a new attempt.
 */
export class StallChecker {
  private readonly worker: Worker;

  constructor(location: QueueLocation, options: StallCheckOptions, log: Logger) {
    const connection = openRedis(location.redisUrl);
    connection.on('error', (err: Error) => log.debug({ err: err.message }, 'stall checker redis error'));
    this.worker = new Worker(location.queueName, null, {
      connection,
      prefix: location.prefix,
      autorun: false,
      stalledInterval: options.stalledIntervalMs,
      lockDuration: options.lockDurationMs,
      maxStalledCount: 1,
    });
    this.worker.on('error', (err) => log.debug({ err: err.message }, 'stall checker error'));
    this.worker.on('stalled', (jobId) => log.warn({ evaluationId: jobId }, "a worker vanished mid-job; its job is back in the queue"));
  }

  start(): void {
    void this.worker.startStalledCheckTimer();
  }

  async close(): Promise<void> {
    await this.worker.close();
  }
}
