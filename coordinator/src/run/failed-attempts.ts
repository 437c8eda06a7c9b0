import { evaluationResultValidator, type EvaluationJob, type EvaluationResult, type RunConfig } from '@netbreeder/shared-types';
import type { Logger } from '../logger.js';
import type { EvaluationRecord, RunStore } from '../store/run-store.js';
import { resumeRef } from '../checkpoints/checkpoint-policy.js';
import type { QueueBatch } from './queue-batch.js';
import { evaluationId } from './proposal-recorder.js';
import { rejectStep } from './search-record.js';

/** What the handling of a failed or refused attempt needs from the run manager. */
export interface AttemptDeps {
  store: RunStore;
  log: Logger;
  now: () => number;
  configOf: (runId: string) => RunConfig;
  /** A search evaluation was given up: nothing continues it. */
  onSearchGivenUp: (ev: EvaluationRecord) => void;
}

/**
 * Why a returned value cannot be recorded for `ev`, or null when it can: it breaks the result
 * schema, names another evaluation, comes from a revoked or quarantined worker, or lacks what its
 * kind needs.
 */
export function resultProblem(
  ev: EvaluationRecord,
  value: unknown,
  o: { config: RunConfig; isRevoked: (workerId: string) => boolean; isQuarantined: (workerId: string) => boolean },
): string | null {
  const issues = evaluationResultValidator.issues(value);
  if (issues.length) return issues.slice(0, 5).map((i) => `${i.path || '(root)'} ${i.message}`).join('; ');
  const result = value as EvaluationResult;
  if (result.evaluationId !== ev.id) return `result names evaluation ${result.evaluationId}, not ${ev.id}`;
  if (o.isRevoked(result.workerId)) return `worker ${result.workerId} is revoked`;
  if (o.isQuarantined(result.workerId)) return `worker ${result.workerId} is quarantined (its results failed verification); another worker will run it`;
  if (ev.kind === 'search' && (result.valAccuracy === null || result.valLoss === null)) return 'a search result needs validation accuracy and loss';
  if (ev.kind === 'search' && result.latencyMsPerSample === undefined && o.config.search.algorithm === 'pareto-evolution' && o.config.search.objective === 'latency') {
    return 'this run weighs accuracy against measured latency, and the result has none (a worker older than latency measurement: update it)';
  }
  if (ev.kind === 'champion' && !result.model) return 'a champion result needs the trained model';
  return null;
}

/**
 * A result that cannot be recorded changes nothing but the event log: the same job goes back in
 * the queue for another worker. Past `maxAttempts` rejections the attempt counts as failed.
 */
export function rejectResult(d: AttemptDeps, ev: EvaluationRecord, problem: string, batch: QueueBatch): void {
  d.store.logEvent(ev.runId, 'rejected-result', { evaluationId: ev.id, reason: problem });
  if (ev.kind === 'search') d.store.addSearchStep(rejectStep(ev.runId, 'result', { evaluationId: ev.id, genomeHash: ev.genomeHash }, [problem], d.now()));
  d.log.warn({ evaluationId: ev.id, reason: problem }, 'result rejected; the job goes back in the queue');
  batch.remove.push(ev.id);
  if (d.store.countEventsNaming(ev.runId, 'rejected-result', ev.id) >= d.configOf(ev.runId).evaluation.maxAttempts) {
    recordFailedAttempt(d, ev, `every result for it was rejected; the last because ${problem}`, false, batch);
  } else {
    batch.add.push(ev.job);
  }
}

/**
 * Records a failed attempt and, unless it cannot succeed, the next attempt (queued with the
 * batch), which resumes from the latest checkpoint any attempt of the evaluation uploaded.
 * Returns true when the evaluation was given up.
 */
export function recordFailedAttempt(d: AttemptDeps, ev: EvaluationRecord, reason: string, unrecoverable: boolean, batch: QueueBatch): boolean {
  const canRetry = !unrecoverable && ev.attempt < d.configOf(ev.runId).evaluation.maxAttempts;
  const next: EvaluationJob | null = canRetry ? { ...ev.job, attempt: ev.attempt + 1, evaluationId: evaluationId(ev.runId, ev.seq, ev.attempt + 1, ev.kind) } : null;
  const resume = next && ev.kind === 'search' ? resumeRef(d.store, ev.runId, ev.seq) : undefined;
  if (next && resume) next.resume = resume;
  if (d.store.recordFailure(ev.id, reason, d.now()) !== 'recorded') return false;
  if (next) {
    d.store.addEvaluation(next, ev.seq, d.now(), false);
    d.store.logEvent(ev.runId, 'reissued', { evaluationId: ev.id, next: next.evaluationId, reason });
    batch.add.push(next);
  } else {
    d.store.logEvent(ev.runId, 'genome-failing', { evaluationId: ev.id, genomeHash: ev.genomeHash, attempts: ev.attempt, reason });
    if (ev.kind === 'search') d.onSearchGivenUp(ev);
  }
  d.log.warn({ evaluationId: ev.id, reason, reissuedAs: next?.evaluationId ?? null }, 'evaluation attempt failed');
  return next === null;
}
