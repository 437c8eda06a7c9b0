import { describe, expect, it } from 'vitest';
import { mkdtemp } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { spawnWorker } from '@netbreeder/coordinator';
import { cpuSeconds, freePort, startRedisServer } from '../support/processes.js';
import { waitFor } from '../support/harness.js';

/**
 * A worker whose Redis and coordinator cannot be reached (nothing listens on their ports, on this
 * machine's loopback): it says so in its log, retries with growing delays, and does not spin.
 * When Redis appears, it connects by itself.
 */
describe('a worker that cannot reach Redis or the coordinator', () => {
  it('retries with backoff, logs it, and does not spin', async () => {
    const redisPort = await freePort();
    const coordinatorPort = await freePort();
    const log: string[] = [];
    const w = spawnWorker(
      ['--coordinator', `http://127.0.0.1:${coordinatorPort}`, '--redis', `redis://127.0.0.1:${redisPort}`, '--id', 'lonely', '--cache-dir', await mkdtemp(join(tmpdir(), 'nb-lonely-'))],
      { env: { NETBREEDER_LOG_LEVEL: 'info', NETBREEDER_JOIN_TOKEN: 'x' } },
    );
    w.stderr!.on('data', (c: Buffer) => log.push(c.toString()));
    try {
      await waitFor('the worker to try Redis a few times', () => log.join('').split('cannot reach Redis').length > 4, 60_000, 200);
      const cpuBefore = cpuSeconds(w.pid!);
      await new Promise((r) => setTimeout(r, 5000));
      const cpuUsed = cpuSeconds(w.pid!) - cpuBefore;
      expect(cpuUsed).toBeLessThan(1); // 5 s of waiting cost well under a second of CPU: no busy loop

      const delays = log
        .join('')
        .split('\n')
        .filter((l) => l.includes('cannot reach Redis'))
        .map((l) => (JSON.parse(l) as { delayMs: number }).delayMs);
      expect(delays.length).toBeGreaterThan(3);
      for (let i = 1; i < delays.length; i++) expect(delays[i]!).toBeGreaterThanOrEqual(delays[i - 1]!);
      expect(delays.at(-1)!).toBeGreaterThan(delays[0]!);
      expect(log.join('')).toContain('cannot reach the coordinator');

      // Redis comes up: the worker connects by itself (it stops logging Redis retries).
      const redis = await startRedisServer(redisPort);
      try {
        await waitFor('the worker to register with the new Redis', async () => {
          const { Redis } = await import('ioredis');
          const r = new Redis(`redis://127.0.0.1:${redisPort}`, { lazyConnect: true, maxRetriesPerRequest: 1 });
          await r.connect();
          const clients = await r.client('LIST');
          r.disconnect();
          return String(clients).includes('lonely') || String(clients).split('\n').filter(Boolean).length > 1;
        }, 60_000, 500);
      } finally {
        redis.child.kill('SIGKILL');
      }
    } finally {
      w.kill('SIGKILL');
    }
  }, 120_000);
});
