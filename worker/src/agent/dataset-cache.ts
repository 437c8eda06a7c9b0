import { mkdir, readFile, readdir, rename, rm, stat, utimes, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { NetbreederError, sha256Hex, type DatasetManifest } from '@netbreeder/shared-types';
import type { Logger } from 'pino';
import { authHeader } from './auth-header.js';

/** How stale a cached shard's modification time may get before a job marks it as used again. */
const TOUCH_EVERY_MS = 60_000;

/** Where and how much a worker caches downloaded training shards. */
export interface DatasetCacheOptions {
  /** Folder for cached shards, each named by its sha256. */
  dir: string;
  /** Most bytes the cache may hold; least recently used shards go first. @default 2 GiB */
  maxBytes?: number;
  /** Coordinator base URL, e.g. `http://coordinator-host:7460`. */
  coordinatorUrl: string;
  /** Download attempts before a job fails (each one verified by sha256). @default 3 */
  attempts?: number;
  /** The coordinator's join token. */
  joinToken?: string | null;
}

/**
 * Downloads a run's training shard from the coordinator once, verifies its sha256 and keeps it on
 * disk for later jobs and later runs. A truncated or corrupted download is detected by the hash
 * and fetched again; a file in the cache whose hash no longer matches is replaced.
 */
export class DatasetCache {
  private readonly maxBytes: number;
  private readonly attempts: number;
  private readonly pending = new Map<string, Promise<string>>();
  /** Shards whose hash this process has checked since it started. */
  private readonly verified = new Set<string>();

  constructor(
    private readonly opts: DatasetCacheOptions,
    private readonly log: Logger,
  ) {
    this.maxBytes = opts.maxBytes ?? 2 * 1024 ** 3;
    this.attempts = opts.attempts ?? 3;
  }

  /** Path of the verified shard file for `manifest`, downloading it when needed. */
  ensure(manifest: DatasetManifest): Promise<string> {
    let p = this.pending.get(manifest.sha256);
    if (!p) {
      p = this.fetchOnce(manifest).finally(() => this.pending.delete(manifest.sha256));
      this.pending.set(manifest.sha256, p);
    }
    return p;
  }

  private async fetchOnce(manifest: DatasetManifest): Promise<string> {
    const path = join(this.opts.dir, `${manifest.sha256}.nbs`);
    const cached = await stat(path).catch(() => null);
    if (cached && cached.size === manifest.bytes) {
      if (this.verified.has(manifest.sha256) || (await sha256OfFile(path)) === manifest.sha256) {
        this.verified.add(manifest.sha256);
        // Marked as recently used (eviction goes by modification time), at most once a minute.
        if (Date.now() - cached.mtimeMs > TOUCH_EVERY_MS) {
          const now = new Date();
          await utimes(path, now, now);
        }
        return path;
      }
      this.log.warn({ dataset: manifest.sha256.slice(0, 12) }, 'cached dataset is corrupted; fetching it again');
      await rm(path, { force: true });
    }
    if (manifest.bytes > this.maxBytes) {
      throw new NetbreederError('NB_DATASET_CACHE_TOO_SMALL', `dataset ${manifest.sha256.slice(0, 12)} is ${manifest.bytes} bytes, more than this worker's cache cap of ${this.maxBytes}; raise --cache-max-mb`);
    }
    await mkdir(this.opts.dir, { recursive: true });
    const url = new URL(`/datasets/${manifest.sha256}`, this.opts.coordinatorUrl).toString();
    let lastError = '';
    for (let attempt = 1; attempt <= this.attempts; attempt++) {
      try {
        const res = await fetch(url, { headers: authHeader(this.opts.joinToken ?? null) });
        if (!res.ok) throw new NetbreederError('NB_DATASET_DOWNLOAD_FAILED', `HTTP ${res.status} from ${url}`);
        const bytes = Buffer.from(await res.arrayBuffer());
        const sha = sha256Hex(bytes);
        if (sha !== manifest.sha256) throw new NetbreederError('NB_DATASET_DOWNLOAD_FAILED', `download has sha256 ${sha.slice(0, 12)}…, expected ${manifest.sha256.slice(0, 12)}… (${bytes.length} of ${manifest.bytes} bytes)`);
        await this.makeRoom(bytes.length);
        const tmp = `${path}.${process.pid}.tmp`;
        await writeFile(tmp, bytes);
        await rename(tmp, path);
        this.verified.add(manifest.sha256);
        this.log.info({ dataset: manifest.sha256.slice(0, 12), bytes: bytes.length }, 'dataset downloaded and verified');
        return path;
      } catch (err) {
        lastError = (err as Error).message;
        this.log.warn({ attempt, err: lastError }, 'dataset download failed; retrying');
        await new Promise((r) => setTimeout(r, 500 * attempt));
      }
    }
    throw new NetbreederError('NB_DATASET_DOWNLOAD_FAILED', `cannot fetch dataset ${manifest.sha256.slice(0, 12)} from the coordinator: ${lastError}`);
  }

  /** Removes least recently used shards until `incoming` more bytes fit under the cap. */
  private async makeRoom(incoming: number): Promise<void> {
    const names = (await readdir(this.opts.dir)).filter((n) => n.endsWith('.nbs'));
    const files = await Promise.all(names.map(async (n) => ({ path: join(this.opts.dir, n), st: await stat(join(this.opts.dir, n)) })));
    files.sort((a, b) => a.st.mtimeMs - b.st.mtimeMs);
    let total = files.reduce((a, f) => a + f.st.size, 0);
    for (const f of files) {
      if (total + incoming <= this.maxBytes) break;
      await rm(f.path, { force: true });
      total -= f.st.size;
    }
  }
}

async function sha256OfFile(path: string): Promise<string> {
  return sha256Hex(await readFile(path));
}
