import { spawnSync } from 'node:child_process';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { REDIS_URL } from './support/harness.js';
import { freePort } from './support/processes.js';

/** `npm test`'s first step, tests/preflight.mjs, with this REDIS_URL. */
const preflight = (redisUrl: string) =>
  spawnSync(process.execPath, [join(import.meta.dirname, '..', 'preflight.mjs')], { env: { ...process.env, REDIS_URL: redisUrl }, encoding: 'utf8' });

describe("npm test's preflight", () => {
  it('passes quietly where Redis answers and chromium is installed', () => {
    const ok = preflight(REDIS_URL);
    expect(ok.stderr).toBe('');
    expect(ok.status).toBe(0);
  });

  it('says in one line what is missing, and how to get it, before anything starts', async () => {
    const url = `redis://127.0.0.1:${await freePort()}`; // nothing listens there
    const missing = preflight(url);
    expect(missing.status).toBe(1);
    expect(missing.stderr.trim().split('\n')).toHaveLength(1);
    expect(missing.stderr).toContain(`a Redis answering at ${url} (apt-get install redis-server`);
    expect(missing.stderr).toContain('npx vitest run --project unit');
  });
});
