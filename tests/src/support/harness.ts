import type { ChildProcess } from 'node:child_process';
import { randomBytes } from 'node:crypto';
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Coordinator, createLogger, spawnWorker, type RunRecord } from '@netbreeder/coordinator';

export const REDIS_URL = process.env.REDIS_URL ?? 'redis://127.0.0.1:6379';

/** A Redis key prefix no other test (or real search) uses. */
export const uniquePrefix = (name: string): string => `nbtest-${name}-${randomBytes(4).toString('hex')}`;

/** Polls `condition` until it returns a value or the time runs out (then throws, saying what it waited for). */
export async function waitFor<T>(what: string, condition: () => T | null | undefined | false | Promise<T | null | undefined | false>, timeoutMs: number, everyMs = 250): Promise<T> {
  const deadline = Date.now() + timeoutMs;
  for (;;) {
    const v = await condition();
    if (v) return v;
    if (Date.now() > deadline) throw new Error(`timed out after ${timeoutMs} ms waiting for ${what}`);
    await new Promise((r) => setTimeout(r, everyMs));
  }
}

/** A coordinator on a free port with its own data folder and queue prefix, and local worker processes. */
export class TestCluster {
  readonly workers: ChildProcess[] = [];
  readonly workerLogs: string[] = [];

  private constructor(
    readonly coordinator: Coordinator,
    readonly dataDir: string,
    readonly prefix: string,
    readonly redisUrl: string,
  ) {}

  static async start(
    name: string,
    opts: { dataDir?: string; prefix?: string; lockDurationMs?: number; stalledIntervalMs?: number; publicStatus?: boolean; redisUrl?: string } = {},
  ): Promise<TestCluster> {
    const dataDir = opts.dataDir ?? (await mkdtemp(join(tmpdir(), `nb-${name}-`)));
    const prefix = opts.prefix ?? uniquePrefix(name);
    const coordinator = await Coordinator.start({
      dataDir,
      port: 0,
      host: '127.0.0.1',
      tickMs: 250,
      queue: { redisUrl: opts.redisUrl ?? REDIS_URL, prefix, queueName: 'evaluations' },
      logger: createLogger('coordinator', process.env.NETBREEDER_LOG_LEVEL ?? 'warn'),
      lockDurationMs: opts.lockDurationMs,
      stalledIntervalMs: opts.stalledIntervalMs,
      publicStatus: opts.publicStatus,
    });
    return new TestCluster(coordinator, dataDir, prefix, opts.redisUrl ?? REDIS_URL);
  }

  /** Starts a worker process joined to this cluster; its log is kept for failure messages. */
  spawnWorker(id: string, extraArgs: string[] = [], env: NodeJS.ProcessEnv = {}): ChildProcess {
    const child = spawnWorker(
      ['--coordinator', this.coordinator.url, '--redis', this.redisUrl, '--prefix', this.prefix, '--id', id, '--nice', '0', '--cache-dir', join(this.dataDir, `cache-${id}`), ...extraArgs],
      { env: { NETBREEDER_LOG_LEVEL: 'info', NETBREEDER_JOIN_TOKEN: this.coordinator.secrets.joinToken, ...env } },
    );
    child.stderr?.on('data', (chunk: Buffer) => {
      this.workerLogs.push(`[${id}] ${chunk.toString()}`);
      if (this.workerLogs.length > 400) this.workerLogs.shift();
    });
    this.workers.push(child);
    return child;
  }

  /** Waits until `n` workers have chosen their backend and are idle, so all of them get work. */
  async waitForReadyWorkers(n: number, timeoutMs = 60_000): Promise<void> {
    await waitFor(`${n} ready workers`, () => this.coordinator.store.listWorkers().filter((w) => w.heartbeat.backend && w.heartbeat.state === 'idle').length >= n, timeoutMs);
  }

  /** Stops workers, empties this cluster's queue, closes the coordinator and removes the data. */
  /** Waits until run `runId` is finished or failed and returns it; a timeout names `what` and shows the workers' last log lines. */
  async runEnd(runId: string, what: string, timeoutMs: number): Promise<RunRecord> {
    try {
      return await waitFor(what, () => {
        const r = this.coordinator.store.getRun(runId);
        return r && (r.state === 'finished' || r.state === 'failed') ? r : null;
      }, timeoutMs, 500);
    } catch (err) {
      throw new Error(`${(err as Error).message}\nworker logs:\n${this.workerLogs.slice(-30).join('')}`);
    }
  }

  async stop(opts: { keepData?: boolean } = {}): Promise<void> {
    for (const w of this.workers) if (w.exitCode === null) w.kill('SIGKILL');
    await Promise.all(this.workers.map((w) => new Promise<void>((r) => (w.exitCode !== null || w.signalCode ? r() : w.once('exit', () => r())))));
    await this.coordinator.queue.obliterate().catch(() => undefined);
    await this.coordinator.close();
    if (!opts.keepData) await rm(this.dataDir, { recursive: true, force: true });
  }
}
