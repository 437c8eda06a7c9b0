import type { EvaluationJob, EvaluationResult, Genome, RunConfig, SearchDecision, SearchStep, WorkerHeartbeat } from '@netbreeder/shared-types';
import { RUN_STATES } from './run-lifecycle.js';
import { flag, json, jsonOrNull, num, numOrNull, oneOf, text, textOrNull, type Row } from './row.js';
import {
  CPU_USAGE_KINDS,
  EVALUATION_KINDS,
  EVALUATION_STATES,
  VERDICT_KINDS,
  VERIFICATION_PURPOSES,
  VERIFICATION_STATES,
  type ChampionRecord,
  type CheckpointRecord,
  type CpuUsageRow,
  type EnsembleMemberRecord,
  type EvaluationRecord,
  type EventRecord,
  type GenomeRecord,
  type LineageLink,
  type RunRecord,
  type StoredDataset,
  type VerdictRecord,
  type VerificationRecord,
  type WorkerSeen,
  type WorkerTrustRecord,
} from './records.js';

/** Every row → record mapping of the store, one per table (the columns are those of ./migrations.ts). */

/** Every column of `runs` (the search snapshot is in its own table since migration 7). */
export const RUN_COLUMNS = 'id, name, config_json, state, seed, dataset_json, proposals, created_at, search_started_at, finished_at, failure';

export const runFromRow = (r: Row): RunRecord => ({
  id: text(r, 'id'),
  name: text(r, 'name'),
  config: json<RunConfig>(r, 'config_json'),
  state: oneOf(r, 'state', RUN_STATES),
  seed: num(r, 'seed'),
  dataset: json<StoredDataset>(r, 'dataset_json'),
  proposals: num(r, 'proposals'),
  createdAt: num(r, 'created_at'),
  searchStartedAt: numOrNull(r, 'search_started_at'),
  finishedAt: numOrNull(r, 'finished_at'),
  failure: textOrNull(r, 'failure'),
});

export const evaluationFromRow = (r: Row): EvaluationRecord => ({
  id: text(r, 'id'),
  runId: text(r, 'run_id'),
  kind: oneOf(r, 'kind', EVALUATION_KINDS),
  seq: num(r, 'seq'),
  attempt: num(r, 'attempt'),
  genomeHash: text(r, 'genome_hash'),
  job: json<EvaluationJob>(r, 'job_json'),
  state: oneOf(r, 'state', EVALUATION_STATES),
  queuedAt: num(r, 'queued_at'),
  startedAt: numOrNull(r, 'started_at'),
  finishedAt: numOrNull(r, 'finished_at'),
  workerId: textOrNull(r, 'worker_id'),
  valAccuracy: numOrNull(r, 'val_accuracy'),
  result: jsonOrNull<EvaluationResult>(r, 'result_json'),
  error: textOrNull(r, 'error'),
});

export const genomeFromRow = (r: Row): GenomeRecord => ({
  hash: text(r, 'hash'),
  genome: json<Genome>(r, 'genome_json'),
  params: num(r, 'params'),
  flops: num(r, 'flops'),
  summary: text(r, 'summary'),
});

export const lineageFromRow = (r: Row): LineageLink => ({
  evaluationId: text(r, 'evaluation_id'),
  childHash: text(r, 'child_hash'),
  parentHash: text(r, 'parent_hash'),
  operator: text(r, 'operator'),
  detail: text(r, 'detail'),
});

const SEARCH_STEP_KINDS = ['propose', 'observe', 'submit', 'reject', 'forget'] as const satisfies ReadonlyArray<SearchStep['kind']>;

export const searchStepFromRow = (r: Row): SearchStep => ({
  runId: text(r, 'run_id'),
  step: num(r, 'step'),
  kind: oneOf(r, 'kind', SEARCH_STEP_KINDS),
  evaluationId: textOrNull(r, 'evaluation_id'),
  genomeHash: textOrNull(r, 'genome_hash'),
  parentHashes: json<string[]>(r, 'parent_hashes_json'),
  budgetEpochs: numOrNull(r, 'budget_epochs'),
  reason: text(r, 'reason'),
  decisions: json<SearchDecision[]>(r, 'decisions_json'),
  at: num(r, 'at'),
});

export const workerFromRow = (r: Row): WorkerSeen => ({
  heartbeat: json<WorkerHeartbeat>(r, 'heartbeat_json'),
  firstSeenAt: num(r, 'first_seen_at'),
  lastSeenAt: num(r, 'last_seen_at'),
});

export const championFromRow = (r: Row): ChampionRecord => ({
  runId: text(r, 'run_id'),
  evaluationId: text(r, 'evaluation_id'),
  sourceEvaluationId: text(r, 'source_evaluation_id'),
  genomeHash: text(r, 'genome_hash'),
  valAccuracy: num(r, 'val_accuracy'),
  testAccuracy: num(r, 'test_accuracy'),
  testLoss: num(r, 'test_loss'),
  testPredictions: json<number[]>(r, 'test_predictions_json'),
  result: json<EvaluationResult>(r, 'result_json'),
  createdAt: num(r, 'created_at'),
});

export const ensembleMemberFromRow = (r: Row): EnsembleMemberRecord & { artifactsJson: string } => ({
  runId: text(r, 'run_id'),
  position: num(r, 'position'),
  evaluationId: text(r, 'evaluation_id'),
  sourceEvaluationId: text(r, 'source_evaluation_id'),
  genomeHash: text(r, 'genome_hash'),
  testAccuracy: num(r, 'test_accuracy'),
  artifactsJson: text(r, 'artifacts_json'),
});

export const checkpointFromRow = (r: Row): CheckpointRecord => ({
  runId: text(r, 'run_id'),
  seq: num(r, 'seq'),
  evaluationId: text(r, 'evaluation_id'),
  genomeHash: text(r, 'genome_hash'),
  sha256: text(r, 'sha256'),
  epoch: num(r, 'epoch'),
  final: flag(r, 'final'),
  bytes: num(r, 'bytes'),
  path: text(r, 'path'),
  createdAt: num(r, 'created_at'),
});

/** An event as it was written (its detail was checked against its kind's schema then). */
export const eventFromRow = (r: Row): EventRecord => ({ at: num(r, 'at'), kind: text(r, 'kind'), detail: json<unknown>(r, 'detail_json') }) as EventRecord;

export const verificationFromRow = (r: Row): VerificationRecord => ({
  id: text(r, 'id'),
  runId: text(r, 'run_id'),
  sourceEvaluationId: text(r, 'source_evaluation_id'),
  opinion: oneOf(r, 'opinion', [1, 2] as const),
  purpose: oneOf(r, 'purpose', VERIFICATION_PURPOSES),
  job: json<EvaluationJob>(r, 'job_json'),
  state: oneOf(r, 'state', VERIFICATION_STATES),
  queuedAt: num(r, 'queued_at'),
  finishedAt: numOrNull(r, 'finished_at'),
  workerId: textOrNull(r, 'worker_id'),
  result: jsonOrNull<EvaluationResult>(r, 'result_json'),
  error: textOrNull(r, 'error'),
});

export const verdictFromRow = (r: Row): VerdictRecord => ({
  evaluationId: text(r, 'evaluation_id'),
  runId: text(r, 'run_id'),
  workerId: text(r, 'worker_id'),
  verdict: oneOf(r, 'verdict', VERDICT_KINDS),
  reason: text(r, 'reason'),
  decidedAt: num(r, 'decided_at'),
});

export const trustFromRow = (r: Row): WorkerTrustRecord => ({
  workerId: text(r, 'worker_id'),
  agreed: num(r, 'agreed'),
  failed: num(r, 'failed'),
  quarantinedAt: numOrNull(r, 'quarantined_at'),
  quarantineReason: textOrNull(r, 'quarantine_reason'),
});

export const cpuUsageFromRow = (r: Row): CpuUsageRow => ({
  workerId: text(r, 'worker_id'),
  kind: oneOf(r, 'kind', CPU_USAGE_KINDS),
  evaluations: num(r, 'evaluations'),
  cpuSeconds: num(r, 'cpu_seconds'),
  wattHours: num(r, 'watt_hours'),
  assumedWattHours: num(r, 'assumed_watt_hours'),
  cpuSecondsWithoutWatts: num(r, 'cpu_seconds_without_watts'),
});
