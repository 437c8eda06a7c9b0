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
import { freePort, spawnCli } from './support/processes.js';

const examples = join(import.meta.dirname, '..', '..', 'examples');
let tmp = '';
afterAll(async () => {
  if (tmp) await rm(tmp, { recursive: true, force: true });
});

describe('netbreeder run', () => {
  it('runs a small run file to a summary and an export, with a private Redis it stops at the end', async () => {
    tmp = await mkdtemp(join(tmpdir(), 'nb-run-command-'));
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
    const port = await freePort(); // nothing answers here
    const dataDir = join(tmp, 'data');
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
});
