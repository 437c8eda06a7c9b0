import { createHash } from 'node:crypto';
import { EvaluationsTable } from './evaluations-table.js';
import { text } from './row.js';
import { SearchLogTable } from './search-log-table.js';
import { StoreDatabase } from './store-database.js';
import { NetbreederError } from '@netbreeder/shared-types';

/**
 * Fills the closed store at `path` with `total` synthetic finished search evaluations of run
 * `runId` (one transaction), so a benchmark measures a store of that size (`npm run bench:scale`).
 * Each gets the rows a recorded result writes, so every index a result touches is as deep as in a
 * real store of that size: its evaluation, its own genome (a distinct random-looking hash), two
 * search steps and a lineage link. Only the payloads are short (no job, result or decisions; the
 * genome is that of the run's first proposal, so every size copies the same small genome), so the
 * file is smaller than a real store's. The rows have negative sequence numbers, one result a
 * second, the newest a minute before `newest` (so none counts in the last minute's rate).
 */
export function prefillFinishedEvaluations(path: string, runId: string, total: number, newest = Date.now() - 60_000): void {
  // 256 MiB of page cache: a million rows' index pages stay in memory while the transaction writes them.
  const db = new StoreDatabase(path, { cacheMb: 256 });
  try {
    const evaluations = new EvaluationsTable(db);
    const searchLog = new SearchLogTable(db);
    const first = db.get('SELECT genome_hash FROM evaluations WHERE run_id = ? AND seq >= 0 ORDER BY seq LIMIT 1', runId);
    const found = first && evaluations.getGenome(text(first, 'genome_hash'));
    if (!found) throw new NetbreederError('NB_RUN_STATE', `run ${runId} has no proposal in ${path} to take a genome from; run its search for a while first`);
    const genome = { params: found.params, flops: found.flops, summary: found.summary, genomeJson: JSON.stringify(found.genome) };
    const hashOf = (i: number) => createHash('sha256').update(`${runId}:prefill:${i}`).digest('hex');
    db.transaction(() => {
      for (let i = 0; i < total; i++) {
        const at = newest - (total - i) * 1000;
        const id = `${runId}-prefill${i}`;
        const hash = hashOf(i);
        const parent = hashOf(Math.max(0, i - 1 - (i % 7)));
        evaluations.putGenomeJson({ ...genome, hash });
        db.run(
          `INSERT INTO evaluations (id, run_id, kind, seq, attempt, genome_hash, seed, job_json, state, queued_at, started_at, finished_at,
             worker_id, backend, val_accuracy, val_loss, train_seconds, samples_per_second, result_json)
           VALUES (?, ?, 'search', ?, 1, ?, 0, '{}', 'done', ?, ?, ?, 'prefill', 'cpu', ?, 2.0, 10, 0, NULL)`,
          id, runId, -1 - i, hash, at - 10_000, at - 10_000, at, ((i * 7919) % 1000) / 10_000,
        );
        const step = { runId, evaluationId: id, genomeHash: hash, budgetEpochs: null, reason: 'prefill', decisions: [] };
        searchLog.addStep({ ...step, kind: 'propose', parentHashes: [parent], at: at - 10_000 });
        searchLog.addStep({ ...step, kind: 'observe', parentHashes: [], at });
        searchLog.addLineage(runId, { evaluationId: id, childHash: hash, parentHash: parent, operator: 'prefill', detail: '' });
      }
    });
  } finally {
    db.close();
  }
}
