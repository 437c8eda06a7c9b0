import { createHash } from 'node:crypto';
import { createServer, type Server } from 'node:http';
import { mkdtemp, readFile, rm, stat, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, beforeEach, describe, expect, it } from 'vitest';
import { encodeShard, type DatasetManifest } from '@netbreeder/shared-types';
import { createLogger } from '@netbreeder/coordinator';
import { DatasetCache } from '@netbreeder/worker';

/**
 * The worker's dataset cache against a real HTTP server on a free port, which can be told to send
 * a truncated or corrupted body: every bad download and every damaged cache file must be caught by
 * the sha256 and fetched again.
 */
const shard = encodeShard({
  inputShape: [3],
  classNames: ['sound', 'cracked'],
  train: { features: Float32Array.from({ length: 30 }, (_, i) => i / 7), labels: Int32Array.from({ length: 10 }, (_, i) => i % 2), count: 10 },
  val: { features: Float32Array.from({ length: 9 }, (_, i) => -i), labels: Int32Array.from([0, 1, 0]), count: 3 },
});
const sha256 = createHash('sha256').update(shard).digest('hex');
const manifest: DatasetManifest = { sha256, bytes: shard.length, inputShape: [3], numClasses: 2, classNames: ['sound', 'cracked'], trainCount: 10, valCount: 3 };

describe('DatasetCache', () => {
  let server: Server;
  let url: string;
  let dir: string;
  /** What the server does with the next requests, one entry each; then it serves the shard whole. */
  let plan: Array<'truncate' | 'corrupt'> = [];
  let requests = 0;
  const log = createLogger('dataset-cache-test', 'silent');

  beforeAll(async () => {
    server = createServer((req, res) => {
      requests++;
      if (req.url !== `/datasets/${sha256}`) {
        res.writeHead(404).end();
        return;
      }
      const step = plan.shift();
      let body = shard;
      if (step === 'truncate') body = shard.subarray(0, shard.length - 17);
      if (step === 'corrupt') {
        body = Buffer.from(shard);
        body[body.length - 5]! ^= 0xff;
      }
      res.writeHead(200, { 'content-type': 'application/octet-stream' }).end(body);
    });
    await new Promise<void>((r) => server.listen(0, '127.0.0.1', () => r()));
    const address = server.address();
    url = `http://127.0.0.1:${typeof address === 'object' && address ? address.port : 0}`;
  });

  afterAll(async () => {
    await new Promise<void>((r) => server.close(() => r()));
  });

  beforeEach(async () => {
    plan = [];
    requests = 0;
    if (dir) await rm(dir, { recursive: true, force: true });
    dir = await mkdtemp(join(tmpdir(), 'nb-cache-'));
  });

  const cache = (opts: { maxBytes?: number; attempts?: number } = {}) => new DatasetCache({ dir, coordinatorUrl: url, ...opts }, log);

  it('downloads once, verifies, and serves later calls (and later processes) from disk', async () => {
    const path = await cache().ensure(manifest);
    expect((await readFile(path)).equals(shard)).toBe(true);
    expect(requests).toBe(1);
    await cache().ensure(manifest); // a new process: checks the hash of the file, no download
    expect(requests).toBe(1);
  });

  it('detects a truncated and a corrupted download and fetches again', async () => {
    plan = ['truncate', 'corrupt'];
    const path = await cache({ attempts: 3 }).ensure(manifest);
    expect(requests).toBe(3);
    expect((await readFile(path)).equals(shard)).toBe(true);
  });

  it('gives up with the reason after its attempts when every download is bad', async () => {
    plan = ['corrupt', 'corrupt'];
    await expect(cache({ attempts: 2 }).ensure(manifest)).rejects.toThrow(/sha256/);
  });

  it('replaces a cache file that was corrupted or truncated on disk', async () => {
    const path = await cache().ensure(manifest);
    const damaged = Buffer.from(shard);
    damaged[40]! ^= 0x01;
    await writeFile(path, damaged); // same size, wrong bytes
    await cache().ensure(manifest);
    expect(requests).toBe(2);
    expect((await readFile(path)).equals(shard)).toBe(true);
    await writeFile(path, shard.subarray(0, 20)); // truncated
    await cache().ensure(manifest);
    expect(requests).toBe(3);
    expect((await stat(path)).size).toBe(shard.length);
  });

  it('refuses a shard above its size cap without downloading it', async () => {
    await expect(cache({ maxBytes: shard.length - 1 }).ensure(manifest)).rejects.toThrow(/cache cap/);
    expect(requests).toBe(0);
  });
});
