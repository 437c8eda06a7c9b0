import { Queue, QueueEvents } from 'bullmq';
import type { Redis } from 'ioredis';
import { DO_NOT_RETRY_PREFIX, type EvaluationJob } from '@netbreeder/shared-types';
import type { Logger } from '../logger.js';
import { openRedis, type QueueLocation } from '@netbreeder/worker';

/** A finished BullMQ job, as the reconciler reads it. */
export interface FinishedJob {
  id: string;
  state: 'completed' | 'failed';
  returnvalue: unknown;
  failedReason: string | null;
  /** True when the worker said the job must not be retried (an unrecoverable error). */
  unrecoverable: boolean;
}

/**
 * The coordinator's side of the job queue. A job's id is its evaluation id, so adding an evaluation
 * that is already queued changes nothing. Finished jobs stay in Redis until the coordinator has
 * recorded them in its store and then removes them ({@link EvaluationQueue.remove}), so a result
 * survives a coordinator restart.
 */
export class EvaluationQueue {
  private readonly connection: Redis;
  private readonly queue: Queue;
  private events: QueueEvents | null = null;

  constructor(
    readonly location: QueueLocation,
    private readonly log: Logger,
  ) {
    this.connection = openRedis(location.redisUrl, (attempt, delayMs) =>
      log.warn({ attempt, delayMs, redisUrl: redactUrl(location.redisUrl) }, 'cannot reach Redis; retrying'),
    );
    this.connection.on('error', (err: Error) => log.debug({ err: err.message }, 'redis connection error'));
    this.queue = new Queue(location.queueName, { connection: this.connection, prefix: location.prefix });
    this.queue.on('error', (err) => log.debug({ err: err.message }, 'queue error'));
  }

  /** Adds (or, when already there, leaves alone) one evaluation's job. */
  async add(job: EvaluationJob): Promise<void> {
    await this.queue.add(job.kind, job, jobOptions(job));
  }

  /**
   * Adds many jobs (each left alone when already there). The adds go out together, not one round
   * trip each, but as separate commands: a bulk add wakes only one waiting worker, and with a
   * thousand workers blocked on an empty queue the rest would sit idle until their block timeout.
   */
  async addMany(jobs: readonly EvaluationJob[]): Promise<void> {
    await Promise.all(jobs.map((job) => this.add(job)));
  }

  /** True when Redis still knows the job (in any state). */
  async has(evaluationId: string): Promise<boolean> {
    return (await this.queue.getJob(evaluationId)) != null;
  }

  /** The job's BullMQ state ('waiting', 'active', 'completed', …, or 'unknown' when Redis lacks it). */
  async jobState(evaluationId: string): Promise<string> {
    return this.queue.getJobState(evaluationId);
  }

  /**
   * Up to `limit` finished jobs of each kind, oldest first. Reads only the fields a finished job's
   * outcome is in, not the whole job: its payload (genome, dataset manifest) is in the store.
   */
  async finished(limit = 200): Promise<FinishedJob[]> {
    const states = ['completed', 'failed'] as const;
    const ids = await Promise.all(states.map((state) => this.queue.getRanges([state], 0, limit - 1, true)));
    const listed = states.flatMap((state, k) => ids[k]!.map((id) => ({ id, state })));
    if (!listed.length) return [];
    const pipeline = this.connection.pipeline();
    for (const { id } of listed) pipeline.hmget(this.queue.toKey(id), 'name', 'returnvalue', 'failedReason');
    const replies = (await pipeline.exec()) ?? [];
    const out: FinishedJob[] = [];
    listed.forEach(({ id, state }, i) => {
      const [err, fields] = replies[i] ?? [null, null];
      const [name, returnvalue, reason] = (fields as Array<string | null> | null) ?? [null, null, null];
      // `name` is set on every job: without it the job was removed meanwhile.
      if (err || name === null) return;
      const failedReason = state === 'failed' ? (reason || 'failed without a reason') : null;
      out.push({
        id,
        state,
        returnvalue: parseReturnValue(returnvalue ?? null),
        failedReason,
        unrecoverable: failedReason != null && failedReason.startsWith(DO_NOT_RETRY_PREFIX),
      });
    });
    return out;
  }

  async remove(evaluationId: string): Promise<void> {
    await this.queue.remove(evaluationId);
  }

  /** Removes many finished jobs; the commands go out together rather than one round trip each. */
  async removeMany(evaluationIds: readonly string[]): Promise<void> {
    await Promise.all(evaluationIds.map((id) => this.queue.remove(id)));
  }

  /** Jobs by BullMQ state, for status and metrics. */
  async counts(): Promise<Record<string, number>> {
    return this.queue.getJobCounts('waiting', 'prioritized', 'active', 'completed', 'failed', 'delayed');
  }

  /** Calls `onFinish` whenever a job completes or fails (best-effort: the reconciler does not rely on it). */
  async watch(onFinish: () => void): Promise<void> {
    if (this.events) return;
    this.events = new QueueEvents(this.location.queueName, { connection: this.connection.duplicate(), prefix: this.location.prefix });
    this.events.on('error', (err) => this.log.debug({ err: err.message }, 'queue events error'));
    this.events.on('completed', onFinish);
    this.events.on('failed', onFinish);
    await this.events.waitUntilReady();
  }

  /**
   * Checks the marker key this coordinator keeps beside its queue. A missing marker means Redis
   * lost its data (FLUSHALL, or a restart without persistence): the marker is set again and
   * `'lost'` returned, so the caller can rebuild the queue from the store.
   */
  async checkMarker(storeId: string): Promise<'present' | 'lost'> {
    const key = `${this.location.prefix}:${this.location.queueName}:netbreeder-store`;
    const set = await this.connection.set(key, storeId, 'NX');
    return set === 'OK' ? 'lost' : 'present';
  }

  /** Removes every job of this queue (tests and `netbreeder reset` only). */
  async obliterate(): Promise<void> {
    await this.queue.obliterate({ force: true });
  }

  async close(): Promise<void> {
    await this.events?.close();
    await this.queue.close();
    this.connection.disconnect();
  }
}

/**
 * BullMQ priority of a job (lower goes first; FIFO within one): champion trainings, then
 * verifications (the champion phase may wait on them), then search trainings that continue their
 * own lower rung's checkpoint (promotions of successive halving: ASHA promotes before it starts
 * anything new, and without this a promotion would wait behind the fresh jobs queued as slack),
 * then the rest of the search. Derived from the job alone, so a job queued again after a restart
 * keeps its place.
 */
export const jobPriority = (job: EvaluationJob): number =>
  job.kind === 'champion' ? 1 : job.verifies ? 5 : job.inherit?.kind === 'own-checkpoint' ? 8 : 10;

const jobOptions = (job: EvaluationJob) => ({
  jobId: job.evaluationId,
  attempts: 1,
  removeOnComplete: false,
  removeOnFail: false,
  priority: jobPriority(job),
});

/** A job's stored return value: JSON as BullMQ writes it, or the raw text when it is not JSON. */
function parseReturnValue(text: string | null): unknown {
  if (text === null) return null;
  try {
    return JSON.parse(text) as unknown;
  } catch {
    return text;
  }
}

/** The URL without its password, for logs. */
export function redactUrl(url: string): string {
  try {
    const u = new URL(url);
    if (u.password) u.password = '***';
    return u.toString();
  } catch {
    return '(unparseable URL)';
  }
}
