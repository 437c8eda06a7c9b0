import { Redis, type RedisOptions } from 'ioredis';

/** Where the job queue lives. All processes of one search must agree on all three. */
export interface QueueLocation {
  /** `redis://[user:password@]host:port[/db]`, or `rediss://` for TLS. @default 'redis://127.0.0.1:6379' */
  redisUrl: string;
  /** Key prefix in Redis; give every coordinator (and every test) its own. @default 'netbreeder' */
  prefix: string;
  /** BullMQ queue name under the prefix. @default 'evaluations' */
  queueName: string;
}

export const DEFAULT_QUEUE_LOCATION: QueueLocation = {
  redisUrl: 'redis://127.0.0.1:6379',
  prefix: 'netbreeder',
  queueName: 'evaluations',
};

/**
 * Opens an ioredis connection as BullMQ needs it (`maxRetriesPerRequest: null`, so commands wait
 * through a reconnect instead of failing). Reconnects with capped exponential backoff and reports
 * each attempt through `onRetry`, so an unreachable Redis is logged, never spun on.
 */
export function openRedis(url: string, onRetry?: (attempt: number, delayMs: number) => void, extra: RedisOptions = {}): Redis {
  return new Redis(url, {
    maxRetriesPerRequest: null,
    enableReadyCheck: true,
    retryStrategy: (attempt: number) => {
      const delay = Math.min(30_000, 250 * 2 ** Math.min(attempt, 7));
      onRetry?.(attempt, delay);
      return delay;
    },
    ...extra,
  });
}
