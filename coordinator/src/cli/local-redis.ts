import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import { createConnection, createServer } from 'node:net';
import { tmpdir } from 'node:os';
import { NetbreederError } from '@netbreeder/shared-types';

/** A Redis to use, and how to let go of it. */
export interface LocalRedis {
  url: string;
  /** Whether this process started it (then {@link LocalRedis.stop} stops it). */
  private: boolean;
  stop(): Promise<void>;
}

/** Whether something at `url` answers a Redis PING (with PONG, or an error such as NOAUTH: it is a Redis). */
export function redisAnswers(url: string, timeoutMs = 1500): Promise<boolean> {
  const { hostname, port } = new URL(url);
  return new Promise((resolve) => {
    const socket = createConnection({ host: hostname || '127.0.0.1', port: Number(port || 6379) });
    const done = (ok: boolean) => {
      socket.destroy();
      resolve(ok);
    };
    socket.setTimeout(timeoutMs, () => done(false));
    socket.once('error', () => done(false));
    socket.once('connect', () => socket.write('PING\r\n'));
    socket.once('data', (chunk) => done(/^[+-]/.test(chunk.toString())));
  });
}

const INSTALL_HINT =
  'install Redis (Debian/Ubuntu: sudo apt install redis-server; macOS: brew install redis; Windows: inside WSL as on Ubuntu, or docker run -p 6379:6379 redis) or pass --redis URL of a running one';

/**
 * The Redis at `url` when it answers; else, when `redis-server` is installed, a private one on a free
 * loopback port that keeps nothing on disk and is stopped by `stop()`; else an error saying in one
 * sentence how to get one.
 */
export async function ensureRedis(url: string): Promise<LocalRedis> {
  if (await redisAnswers(url)) return { url, private: false, stop: async () => {} };
  if (spawnSync('redis-server', ['--version'], { stdio: 'ignore' }).status !== 0) {
    throw new NetbreederError('NB_REDIS_UNREACHABLE', `nothing answers at ${url} and redis-server is not installed: ${INSTALL_HINT}`);
  }
  const port = await freeLoopbackPort();
  const child = spawn('redis-server', ['--port', String(port), '--bind', '127.0.0.1', '--save', '', '--appendonly', 'no', '--dir', tmpdir()], { stdio: 'ignore' });
  const privateUrl = `redis://127.0.0.1:${port}`;
  const stop = () => stopChild(child);
  for (let waited = 0; !(await redisAnswers(privateUrl, 500)); waited += 100) {
    if (child.exitCode !== null || waited > 20_000) {
      await stop();
      throw new NetbreederError('NB_REDIS_UNREACHABLE', `nothing answers at ${url} and a private redis-server on port ${port} did not start: start Redis yourself or pass --redis URL`);
    }
    await new Promise((r) => setTimeout(r, 100));
  }
  return { url: privateUrl, private: true, stop };
}

function stopChild(child: ChildProcess): Promise<void> {
  if (child.exitCode !== null || child.signalCode !== null) return Promise.resolve();
  return new Promise((resolve) => {
    child.once('exit', () => resolve());
    child.kill('SIGTERM');
  });
}

/** A free TCP port on the loopback interface. */
export function freeLoopbackPort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const srv = createServer();
    srv.once('error', reject);
    srv.listen(0, '127.0.0.1', () => {
      const { port } = srv.address() as { port: number };
      srv.close(() => resolve(port));
    });
  });
}
