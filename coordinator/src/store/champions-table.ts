import { text } from './row.js';
import { championFromRow, ensembleMemberFromRow } from './row-mappers.js';
import type { ChampionRecord, EnsembleMemberRecord } from './records.js';
import type { StoreDatabase } from './store-database.js';

/** A run's champion with its trained model (`champions`) and its averaging ensemble's members (`ensemble_members`). */
export class ChampionsTable {
  constructor(private readonly db: StoreDatabase) {}

  save(c: ChampionRecord, artifactsJson: string): void {
    this.db.run(
      `INSERT OR REPLACE INTO champions (run_id, evaluation_id, source_evaluation_id, genome_hash, val_accuracy, test_accuracy, test_loss,
         test_predictions_json, artifacts_json, result_json, created_at) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`,
      c.runId, c.evaluationId, c.sourceEvaluationId, c.genomeHash, c.valAccuracy, c.testAccuracy, c.testLoss, JSON.stringify(c.testPredictions), artifactsJson, JSON.stringify(c.result), c.createdAt,
    );
  }

  get(runId: string): ChampionRecord | null {
    const r = this.db.get('SELECT * FROM champions WHERE run_id = ?', runId);
    return r ? championFromRow(r) : null;
  }

  /** The champion's trained model (TensorFlow.js layers format, as the worker sent it). */
  artifactsJson(runId: string): string | null {
    const r = this.db.get('SELECT artifacts_json FROM champions WHERE run_id = ?', runId);
    return r ? text(r, 'artifacts_json') : null;
  }

  /** Stores one retrained ensemble member with its model (replacing one at the same position). */
  saveEnsembleMember(m: EnsembleMemberRecord, artifactsJson: string): void {
    this.db.run(
      `INSERT OR REPLACE INTO ensemble_members (run_id, position, evaluation_id, source_evaluation_id, genome_hash, test_accuracy, artifacts_json)
       VALUES (?, ?, ?, ?, ?, ?, ?)`,
      m.runId, m.position, m.evaluationId, m.sourceEvaluationId, m.genomeHash, m.testAccuracy, artifactsJson,
    );
  }

  /** Forgets a run's ensemble members (before a new ensemble is trained). */
  clearEnsembleMembers(runId: string): void {
    this.db.run('DELETE FROM ensemble_members WHERE run_id = ?', runId);
  }

  /** A run's retrained ensemble members by position, with their models' JSON. */
  ensembleMembers(runId: string): Array<EnsembleMemberRecord & { artifactsJson: string }> {
    return this.db.all('SELECT * FROM ensemble_members WHERE run_id = ? ORDER BY position', runId).map(ensembleMemberFromRow);
  }
}
