import { checkpointFromRow } from './row-mappers.js';
import type { CheckpointRecord } from './records.js';
import type { StoreDatabase } from './store-database.js';

/** The latest training checkpoint of each evaluation sequence (`checkpoints`, one row per run and seq). */
export class CheckpointsTable {
  constructor(private readonly db: StoreDatabase) {}

  /**
   * Keeps `c` as the latest checkpoint of its (run, seq) unless one of a higher epoch is held.
   * Returns whether it was kept and the record it replaced (whose file may go).
   */
  record(c: CheckpointRecord): { kept: boolean; replaced: CheckpointRecord | null } {
    return this.db.transaction(() => {
      const held = this.latest(c.runId, c.seq);
      if (held && held.epoch > c.epoch) return { kept: false, replaced: null };
      this.db.run(
        `INSERT OR REPLACE INTO checkpoints (run_id, seq, evaluation_id, genome_hash, sha256, epoch, final, bytes, path, created_at)
         VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`,
        c.runId, c.seq, c.evaluationId, c.genomeHash, c.sha256, c.epoch, c.final ? 1 : 0, c.bytes, c.path, c.createdAt,
      );
      return { kept: true, replaced: held && held.sha256 !== c.sha256 ? held : null };
    });
  }

  /** The latest checkpoint of an evaluation sequence, or null. */
  latest(runId: string, seq: number): CheckpointRecord | null {
    const r = this.db.get('SELECT * FROM checkpoints WHERE run_id = ? AND seq = ?', runId, seq);
    return r ? checkpointFromRow(r) : null;
  }

  /** A held checkpoint by its content hash, or null. */
  bySha(sha256: string): CheckpointRecord | null {
    const r = this.db.get('SELECT * FROM checkpoints WHERE sha256 = ? LIMIT 1', sha256);
    return r ? checkpointFromRow(r) : null;
  }

  /** The final checkpoint of the longest finished training of a genome in a run (a parent's weights), or null. */
  finalOfGenome(runId: string, genomeHash: string): CheckpointRecord | null {
    const r = this.db.get('SELECT * FROM checkpoints WHERE run_id = ? AND genome_hash = ? AND final = 1 ORDER BY epoch DESC, seq DESC LIMIT 1', runId, genomeHash);
    return r ? checkpointFromRow(r) : null;
  }

  /** Forgets the checkpoint of an evaluation sequence; returns what was removed. */
  delete(runId: string, seq: number): CheckpointRecord | null {
    const held = this.latest(runId, seq);
    if (held) this.db.run('DELETE FROM checkpoints WHERE run_id = ? AND seq = ?', runId, seq);
    return held;
  }

  /** How many checkpoint rows name this file (0: the file may be deleted). */
  fileUses(sha256: string): number {
    return this.db.count('SELECT COUNT(*) AS n FROM checkpoints WHERE sha256 = ?', sha256);
  }
}
