/**
 * Errors that end, or are said plainly: a worker with a refused token exits at once with one
 * sentence naming the fix; an unreachable coordinator is named with its URL and cause at the first
 * failure; a coordinator whose run file is wrong creates nothing and never listens.
 * Real processes, real HTTP, real Redis.
 */
import { existsSync } from 'node:fs';
import { mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { TestCluster, REDIS_URL, uniquePrefix, waitFor } from './support/harness.js';
import { freePort, spawnCli } from './support/processes.js';

const examples = join(import.meta.dirname, '..', '..', 'examples');
let tmp: string;
beforeAll(async () => {
  tmp = await mkdtemp(join(tmpdir(), 'nb-cli-errors-'));
});
afterAll(async () => {
  await rm(tmp, { recursive: true, force: true });
});

describe('a worker whose token is refused', () => {
  let cluster: TestCluster;
  beforeAll(async () => {
    cluster = await TestCluster.start('refused-token');
  });
  afterAll(async () => {
    await cluster.coordinator.queue.obliterate().catch(() => undefined);
    await cluster.coordinator.close();
  });

  it('exits non-zero at once with one sentence naming the fix', async () => {
    const worker = spawnCli(
      ['worker', '--coordinator', cluster.coordinator.url, '--redis', REDIS_URL, '--prefix', cluster.prefix, '--id', 'wrong-token', '--nice', '0', '--cache-dir', join(tmp, 'cache')],
      { NETBREEDER_JOIN_TOKEN: 'not-the-token' },
      'worker',
    );
    const code = await worker.exited;
    const output = worker.log.join('');
    expect(code, output).not.toBe(0);
    expect(output).toMatch(/refused this worker's join token \(HTTP 401\): pass the token from the coordinator's secrets\.json with --join-token/);
    expect(output).not.toMatch(/cannot reach the coordinator/);
  });
});

describe('a worker that cannot reach its coordinator', () => {
  it('says so at the first failure with the URL and the cause, keeps running, and names its backend in one line', async () => {
    const port = await freePort(); // nothing listens there
    const url = `http://127.0.0.1:${port}`;
    const worker = spawnCli(
      ['worker', '--coordinator', url, '--redis', REDIS_URL, '--prefix', uniquePrefix('unreachable'), '--nice', '0', '--cache-dir', join(tmp, 'cache2'), '--log-format', 'json'],
      { NETBREEDER_JOIN_TOKEN: 'any' },
      'worker',
    );
    try {
      const line = await waitFor('the first warning', () => worker.log.join('').split('\n').find((l) => l.includes('cannot reach the coordinator')), 60_000);
      expect(line).toContain(`cannot reach the coordinator at ${url}`);
      expect(line).toMatch(/ECONNREFUSED/);
      expect(line).toMatch(/retrying with backoff/);
      expect(worker.child.exitCode).toBeNull();
      // The backend choice is one informative line; TensorFlow.js's own banner stays off the output.
      await waitFor('the backend line', () => worker.log.join('').includes('training on the'), 120_000);
      const output = worker.log.join('');
      expect(output.match(/training on the/g)).toHaveLength(1);
      expect(output).not.toMatch(/tensorflow unavailable/);
      expect(output).not.toMatch(/looks like you are running TensorFlow\.js/);
    } finally {
      worker.child.kill('SIGTERM');
      await worker.exited;
    }
  });
});

describe('a coordinator given a wrong run file', () => {
  it('refuses a missing label column before it creates its data folder or listens', async () => {
    const config = JSON.parse(await readFile(join(examples, 'kiln-run.json'), 'utf8')) as { dataset: { path: string; labelColumn: string } };
    config.dataset.path = join(examples, config.dataset.path);
    config.dataset.labelColumn = 'no_such_column';
    const runFile = join(tmp, 'bad-run.json');
    await writeFile(runFile, JSON.stringify(config));
    const dataDir = join(tmp, 'never-created');
    const port = await freePort();
    const coordinator = spawnCli(['coordinator', '--run', runFile, '--data-dir', dataDir, '--port', String(port), '--host', '127.0.0.1', '--prefix', uniquePrefix('bad-run')], {}, 'coordinator');
    const code = await coordinator.exited;
    const output = coordinator.log.join('');
    expect(code, output).not.toBe(0);
    expect(output).toMatch(/no_such_column/);
    expect(existsSync(dataDir)).toBe(false);
    expect(output).not.toMatch(/coordinator listening/);
  });
});
