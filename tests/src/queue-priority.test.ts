import { randomBytes } from 'node:crypto';
import { Worker } from 'bullmq';
import { afterAll, describe, expect, it } from 'vitest';
import type { EvaluationJob } from '@netbreeder/shared-types';
import { openRedis } from '@netbreeder/worker';
import { EvaluationQueue, createLogger, jobPriority } from '@netbreeder/coordinator';
import { REDIS_URL } from './support/harness.js';

const location = { redisUrl: REDIS_URL, prefix: `nb-test-priority-${randomBytes(4).toString('hex')}`, queueName: 'evaluations' };
const checkpoint = { sha256: 'a'.repeat(64), bytes: 1, epoch: 1, evaluationId: 'lower-rung' };

/** Only the fields the queue reads: kind, id and what the priority is derived from. */
const job = (id: string, extra: Partial<EvaluationJob> = {}) => ({ kind: 'search', evaluationId: id, ...extra }) as EvaluationJob;

const queue = new EvaluationQueue(location, createLogger('coordinator', 'silent'));
afterAll(async () => {
  await queue.obliterate();
  await queue.close();
});

describe('the order in which workers take jobs (a real Redis)', () => {
  it('gives promotions that continue their own checkpoint precedence over fresh search jobs queued before them', async () => {
    await queue.addMany([job('fresh-1'), job('fresh-2')]);
    await queue.add(job('child-of-parent', { inherit: { kind: 'parent-weights', checkpoint } }));
    await queue.add(job('promotion', { inherit: { kind: 'own-checkpoint', checkpoint } }));
    await queue.add(job('verification', { verifies: 'fresh-1' }));
    await queue.add(job('final', { kind: 'champion' }));

    const connection = openRedis(REDIS_URL, () => {});
    const taker = new Worker(location.queueName, null, { connection, prefix: location.prefix, autorun: false });
    const order: string[] = [];
    try {
      for (let n = 0; n < 6; n++) {
        const next = await taker.getNextJob('test-token', { block: false });
        if (!next) break;
        order.push(next.id!);
      }
    } finally {
      await taker.close();
      connection.disconnect();
    }
    // A child starting from its parent's weights is new work: it keeps its place among the fresh jobs.
    expect(order).toEqual(['final', 'verification', 'promotion', 'fresh-1', 'fresh-2', 'child-of-parent']);
  });

  it('derives the priority from the job alone, so a job queued again after a restart keeps it', () => {
    expect(jobPriority(job('p', { inherit: { kind: 'own-checkpoint', checkpoint } }))).toBe(jobPriority(job('q', { inherit: { kind: 'own-checkpoint', checkpoint } })));
    expect(jobPriority(job('p', { inherit: { kind: 'own-checkpoint', checkpoint } }))).toBeLessThan(jobPriority(job('f')));
  });
});
