import type { Logger } from 'pino';
import { CheckpointRefSchema, createValidator, sha256Hex, type CheckpointRef } from '@netbreeder/shared-types';
import { authHeader } from './auth-header.js';

const refValidator = createValidator('checkpoint reference', CheckpointRefSchema);

/** How a {@link CheckpointClient} reaches the coordinator. */
export interface CheckpointClientOptions {
  /** Coordinator base URL, e.g. `http://coordinator-host:7460`. */
  coordinatorUrl: string;
  /** The coordinator's join token. */
  joinToken: string | null;
  /**
   * Test-only fault injection: flip one byte of every upload after hashing it, as a PC with
   * faulty memory would, so the coordinator's hash check can be seen refusing it. @default false
   */
  corruptUploads?: boolean;
}

/**
 * A worker's side of training checkpoints: uploads them to the coordinator (named by their
 * sha256, which the coordinator checks), finds the latest one of an evaluation, and downloads one,
 * verifying its hash. Never throws: a checkpoint that cannot be moved only means a training that
 * cannot resume, so failures come back as a reason to log or to record.
 */
export class CheckpointClient {
  constructor(
    private readonly opts: CheckpointClientOptions,
    private readonly log: Logger,
  ) {}

  private url(path: string): string {
    return new URL(path, this.opts.coordinatorUrl).toString();
  }

  /** Uploads one checkpoint; resolves with null when stored, else with why not. */
  async upload(bytes: Uint8Array, meta: { evaluationId: string; epoch: number }): Promise<string | null> {
    const hash = sha256Hex(bytes);
    let body = bytes;
    if (this.opts.corruptUploads) {
      body = bytes.slice();
      body[body.length - 1] = body[body.length - 1]! ^ 0x01;
    }
    try {
      const res = await fetch(this.url(`/checkpoints/${hash}`), {
        method: 'PUT',
        headers: { ...authHeader(this.opts.joinToken), 'content-type': 'application/octet-stream' },
        body,
        signal: AbortSignal.timeout(60_000),
      });
      if (res.ok) {
        this.log.debug({ ...meta, checkpoint: hash.slice(0, 12), bytes: bytes.length }, 'checkpoint uploaded');
        return null;
      }
      const answer = (await res.json().catch(() => null)) as { error?: { code?: string; message?: string } } | null;
      return `HTTP ${res.status} ${answer?.error?.code ?? ''}: ${answer?.error?.message ?? res.statusText}`;
    } catch (err) {
      return `upload failed: ${(err as Error).message}`;
    }
  }

  /** The latest checkpoint the coordinator holds for this evaluation (any earlier attempt of it), or null. */
  async latest(evaluationId: string): Promise<CheckpointRef | null> {
    try {
      const res = await fetch(this.url(`/evaluations/${encodeURIComponent(evaluationId)}/checkpoint`), { headers: authHeader(this.opts.joinToken), signal: AbortSignal.timeout(15_000) });
      if (!res.ok) return null;
      const ref: unknown = await res.json();
      return refValidator.check(ref) ? ref : null;
    } catch (err) {
      this.log.warn({ evaluationId, err: (err as Error).message }, 'cannot ask the coordinator for a checkpoint; training from the job as given');
      return null;
    }
  }

  /** Downloads a checkpoint and checks its size and sha256; `bytes` is null (with `note`) when it fails. */
  async fetch(ref: CheckpointRef): Promise<{ bytes: Uint8Array; note?: undefined } | { bytes: null; note: string }> {
    try {
      const res = await fetch(this.url(`/checkpoints/${ref.sha256}`), { headers: authHeader(this.opts.joinToken), signal: AbortSignal.timeout(60_000) });
      if (!res.ok) return { bytes: null, note: `the coordinator answered HTTP ${res.status} for it` };
      const bytes = new Uint8Array(await res.arrayBuffer());
      const hash = sha256Hex(bytes);
      if (hash !== ref.sha256) return { bytes: null, note: `the download (${bytes.length} of ${ref.bytes} bytes) has sha256 ${hash.slice(0, 12)}…, not ${ref.sha256.slice(0, 12)}…` };
      return { bytes };
    } catch (err) {
      return { bytes: null, note: `download failed: ${(err as Error).message}` };
    }
  }
}
