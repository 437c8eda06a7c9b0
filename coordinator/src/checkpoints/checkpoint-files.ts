import { mkdir, rename, rm, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import type { CheckpointHeader, CheckpointRef } from '@netbreeder/shared-types';
import type { Logger } from '../logger.js';
import type { CheckpointRecord, EvaluationRecord, RunStore } from '../store/run-store.js';

/**
 * The coordinator's checkpoint files: one per evaluation sequence (the latest), named by sha256 in
 * `<dataDir>/checkpoints`, recorded in the store. The HTTP route has verified the hash and the
 * header before {@link CheckpointFiles.put} is called.
 */
export class CheckpointFiles {
  constructor(
    readonly dir: string,
    private readonly store: RunStore,
    private readonly log: Logger,
  ) {}

  /** The file of a checkpoint held under this hash. */
  pathOf(sha256: string): string {
    return join(this.dir, `${sha256}.nbck`);
  }

  /** Stores a verified checkpoint of `ev`; `latest` is false when a later one of its sequence was already held. */
  async put(bytes: Uint8Array, sha256: string, header: CheckpointHeader, ev: EvaluationRecord, now: number): Promise<{ latest: boolean }> {
    await mkdir(this.dir, { recursive: true });
    const path = this.pathOf(sha256);
    const tmp = `${path}.${process.pid}.${now}.tmp`;
    await writeFile(tmp, bytes);
    await rename(tmp, path);
    const record: CheckpointRecord = {
      runId: ev.runId,
      seq: ev.seq,
      evaluationId: ev.id,
      genomeHash: ev.genomeHash,
      sha256,
      epoch: header.epoch,
      final: header.final,
      bytes: bytes.length,
      path,
      createdAt: now,
    };
    const { kept, replaced } = this.store.recordCheckpoint(record);
    if (!kept) await this.removeIfUnused(sha256);
    if (replaced) await this.removeIfUnused(replaced.sha256);
    this.log.debug({ evaluationId: ev.id, epoch: header.epoch, final: header.final, bytes: bytes.length, latest: kept }, 'checkpoint stored');
    return { latest: kept };
  }

  /** Forgets an evaluation sequence's checkpoint and deletes its file (a finished training nothing will continue). */
  async drop(runId: string, seq: number): Promise<void> {
    const held = this.store.deleteCheckpoint(runId, seq);
    if (held) await this.removeIfUnused(held.sha256);
  }

  private async removeIfUnused(sha256: string): Promise<void> {
    if (this.store.checkpointFileUses(sha256) === 0) await rm(this.pathOf(sha256), { force: true });
  }
}

/** The reference a job or a worker gets for a held checkpoint. */
export const checkpointRef = (c: CheckpointRecord): CheckpointRef => ({ sha256: c.sha256, bytes: c.bytes, epoch: c.epoch, evaluationId: c.evaluationId });
