import type { SearchStep } from '@netbreeder/shared-types';
import { text } from './row.js';
import { lineageFromRow, searchStepFromRow } from './row-mappers.js';
import type { LineageLink } from './records.js';
import type { StoreDatabase } from './store-database.js';

/** What the search did and why: its steps with their decisions (`search_steps`) and the mutations between genomes (`lineage`). */
export class SearchLogTable {
  constructor(private readonly db: StoreDatabase) {}

  /** Appends one step of a run's search (a propose or observe call with its decisions, a submission, a refusal); returns its number. */
  addStep(step: Omit<SearchStep, 'step'>): number {
    const next = this.db.count('SELECT COALESCE(MAX(step) + 1, 0) AS n FROM search_steps WHERE run_id = ?', step.runId);
    this.db.run(
      `INSERT INTO search_steps (run_id, step, kind, evaluation_id, genome_hash, parent_hashes_json, budget_epochs, reason, decisions_json, at)
       VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`,
      step.runId, next, step.kind, step.evaluationId, step.genomeHash, JSON.stringify(step.parentHashes), step.budgetEpochs, step.reason, JSON.stringify(step.decisions), step.at,
    );
    return next;
  }

  /** A run's search steps in the order they were made; with `genomeHashes`, only the steps about one of those genomes. */
  steps(runId: string, genomeHashes?: readonly string[]): SearchStep[] {
    const rows = genomeHashes
      ? this.db.all(`SELECT * FROM search_steps WHERE run_id = ? AND genome_hash IN (SELECT value FROM json_each(?)) ORDER BY step`, runId, JSON.stringify(genomeHashes))
      : this.db.all('SELECT * FROM search_steps WHERE run_id = ? ORDER BY step', runId);
    return rows.map(searchStepFromRow);
  }

  addLineage(runId: string, link: LineageLink): void {
    this.db.run(
      'INSERT OR IGNORE INTO lineage (evaluation_id, run_id, child_hash, parent_hash, operator, detail) VALUES (?, ?, ?, ?, ?, ?)',
      link.evaluationId, runId, link.childHash, link.parentHash, link.operator, link.detail,
    );
  }

  /** The chain of mutations that led to `genomeHash`, from its earliest recorded ancestor. */
  lineageChain(runId: string, genomeHash: string, maxDepth: number): LineageLink[] {
    const chain: LineageLink[] = [];
    let hash = genomeHash;
    const seen = new Set<string>();
    while (chain.length < maxDepth && !seen.has(hash)) {
      seen.add(hash);
      const r = this.db.get('SELECT * FROM lineage WHERE run_id = ? AND child_hash = ? ORDER BY evaluation_id LIMIT 1', runId, hash);
      if (!r) break;
      chain.unshift(lineageFromRow(r));
      hash = text(r, 'parent_hash');
    }
    return chain;
  }
}
