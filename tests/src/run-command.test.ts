/**
 * `netbreeder run FILE`: one command from a run file to an exported champion, on a real CSV example,
 * real worker processes, real training. Nothing answers at the given Redis URL, so the command starts
 * its own redis-server (Debian's, as the tests need anyway) and stops it at the end.
 */
import { existsSync } from 'node:fs';
import { mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { redisAnswers } from '@netbreeder/coordinator';
import { REDIS_URL, uniquePrefix, waitFor } from './support/harness.js';
import { freePort, spawnCli, startCoordinatorProcess } from './support/processes.js';

const examples = join(import.meta.dirname, '..', '..', 'examples');
let tmp = '';
afterAll(async () => {
  if (tmp) await rm(tmp, { recursive: true, force: true });
});

/** The kiln CSV example with a tiny budget: four evaluations, a champion of three epochs. */
async function tinyRunFile(): Promise<string> {
  tmp ||= await mkdtemp(join(tmpdir(), 'nb-run-command-'));
  const config = JSON.parse(await readFile(join(examples, 'kiln-run.json'), 'utf8')) as Record<string, unknown> & { dataset: { path: string } };
  config.dataset.path = join(examples, config.dataset.path);
  const runFile = join(tmp, 'tiny-run.json');
  await writeFile(
    runFile,
    JSON.stringify({
      ...config,
      name: 'tiny kiln run',
      search: { algorithm: 'aging-evolution', populationSize: 3, sampleSize: 2 },
      budget: { maxEvaluations: 4, maxMinutes: 5 },
      evaluation: { maxSeconds: 60, maxAttempts: 2 },
      champion: { epochs: 3, maxSeconds: 120 },
    }),
  );
  return runFile;
}

describe('netbreeder run', () => {
  it('runs a small run file to a summary and an export, with a private Redis it stops at the end', async () => {
    const runFile = await tinyRunFile();
    const port = await freePort(); // nothing answers here
    const dataDir = join(tmp, 'run-data');
    const cli = spawnCli(['run', runFile, '--workers', '1', '--redis', `redis://127.0.0.1:${port}`, '--data-dir', dataDir], { NETBREEDER_LOG_LEVEL: 'warn' }, 'run');
    const code = await cli.exited;
    const output = cli.log.join('');
    expect(code, output).toBe(0);
    const privateRedis = output.match(/Redis (redis:\/\/127\.0\.0\.1:(\d+)) \(private, stopped at the end\)/);
    expect(privateRedis, output).not.toBeNull();
    expect(await redisAnswers(privateRedis![1]!)).toBe(false);
    expect(output).toMatch(/Champion of run \S+ after \d+ evaluations:/);
    expect(output).toMatch(/test: +\d+\.\d% on \d+ held-out samples/);
    const exported = output.match(/exported to: (\S+)/)?.[1];
    expect(exported).toBe(join(dataDir, 'runs', exported!.split('/').at(-2)!, 'champion'));
    expect(existsSync(join(exported!, 'model.json'))).toBe(true);
    expect(existsSync(join(exported!, 'report.md'))).toBe(true);
  });

  it('the coordinator command prints the same summary when its run ends', async () => {
    const runFile = await tinyRunFile();
    const port = await freePort();
    const prefix = uniquePrefix('coordinator-summary');
    const tokens = { join: 'summary-join-token', admin: 'summary-admin-token' };
    const coordinator = await startCoordinatorProcess({ port, dataDir: join(tmp, 'coordinator-data'), prefix, redisUrl: REDIS_URL, runFile, tokens, lockMs: 30_000, stalledCheckMs: 15_000 });
    const worker = spawnCli(['worker', '--coordinator', `http://127.0.0.1:${port}`, '--redis', REDIS_URL, '--prefix', prefix, '--nice', '0', '--cache-dir', join(tmp, 'cache'), '--join-token', tokens.join], {}, 'worker');
    try {
      const output = await waitFor('the summary', () => coordinator.log.join('').match(/Champion of run[\s\S]*exported to: .*/)?.[0], 240_000, 500);
      expect(output).toMatch(/test: +\d+\.\d% on \d+ held-out samples/);
      expect(output).toContain(join(tmp, 'coordinator-data', 'runs'));
    } finally {
      worker.child.kill('SIGTERM');
      coordinator.child.kill('SIGTERM');
      await Promise.all([worker.exited, coordinator.exited]);
    }
  });

  it('says in one sentence how to install Redis when nothing answers and redis-server is not installed', async () => {
    const runFile = await tinyRunFile();
    const port = await freePort();
    const dataDir = join(tmp, 'never-created');
    // An empty PATH: no redis-server to be found (node itself is started by its full path).
    const cli = spawnCli(['run', runFile, '--redis', `redis://127.0.0.1:${port}`, '--data-dir', dataDir], { PATH: join(tmp, 'empty-path') }, 'run');
    const code = await cli.exited;
    const output = cli.log.join('');
    expect(code, output).not.toBe(0);
    expect(output).toContain(`nothing answers at redis://127.0.0.1:${port} and redis-server is not installed: install Redis (Debian/Ubuntu: sudo apt install redis-server; macOS: brew install redis; Windows:`);
    expect(existsSync(dataDir)).toBe(false);
  });
});
