import type { RunEventDetail, RunEventKind } from '@netbreeder/shared-types';
import type { DatasetManifest, EvaluationJob, EvaluationResult, Genome, RunConfig, RunState, WorkerHeartbeat } from '@netbreeder/shared-types';
import type { DatasetPreparation } from '../datasets/index.js';

/** What the store hands out and takes in: one record type per table (./row-mappers.ts reads them from rows). */

/** Where a run's prepared data lives on the coordinator's disk. */
export interface StoredDataset {
  manifest: DatasetManifest;
  /** Shard file served to workers (train + validation). */
  shardPath: string;
  /** Held-out test split; never served. */
  testPath: string;
  /** How the inputs were encoded (fitted on the training split), class counts per split, warnings. Absent in runs stored before dataset import existed. */
  preparation?: DatasetPreparation;
}

export interface RunRecord {
  id: string;
  name: string;
  config: RunConfig;
  state: RunState;
  seed: number;
  dataset: StoredDataset;
  proposals: number;
  createdAt: number;
  searchStartedAt: number | null;
  finishedAt: number | null;
  failure: string | null;
}

export const EVALUATION_KINDS = ['search', 'champion'] as const;
export const EVALUATION_STATES = ['queued', 'running', 'done', 'failed'] as const;
export type EvaluationState = (typeof EVALUATION_STATES)[number];

export interface EvaluationRecord {
  id: string;
  runId: string;
  kind: (typeof EVALUATION_KINDS)[number];
  seq: number;
  attempt: number;
  genomeHash: string;
  job: EvaluationJob;
  state: EvaluationState;
  queuedAt: number;
  startedAt: number | null;
  finishedAt: number | null;
  workerId: string | null;
  valAccuracy: number | null;
  result: EvaluationResult | null;
  error: string | null;
}

/** A finished search evaluation with its genome's size and how it trained (the dashboard's rows). */
export type FinishedSearchEvaluation = EvaluationRecord & { params: number; flops: number; backend: string | null; trainSeconds: number | null; samplesPerSecond: number | null };

/** A done search evaluation with its genome (the best of a run). */
export type RankedEvaluation = EvaluationRecord & { params: number; flops: number; summary: string; genome: Genome };

/** When a done search evaluation finished, how long it trained and how fast. */
export interface TrainingSpan {
  finishedAt: number;
  trainSeconds: number;
  samplesPerSecond: number;
}

/** Outcome of offering a result to the store: only `recorded` changed anything. */
export type RecordOutcome = 'recorded' | 'duplicate' | 'unknown-evaluation';

export interface GenomeRecord {
  hash: string;
  genome: Genome;
  params: number;
  flops: number;
  summary: string;
}

export interface LineageLink {
  evaluationId: string;
  childHash: string;
  parentHash: string;
  operator: string;
  detail: string;
}

/** A worker as the store last heard from it. */
export interface WorkerSeen {
  heartbeat: WorkerHeartbeat;
  firstSeenAt: number;
  lastSeenAt: number;
}

export interface ChampionRecord {
  runId: string;
  evaluationId: string;
  sourceEvaluationId: string;
  genomeHash: string;
  valAccuracy: number;
  testAccuracy: number;
  testLoss: number;
  testPredictions: number[];
  result: EvaluationResult;
  createdAt: number;
}

/** One retrained member of a run's averaging ensemble. */
export interface EnsembleMemberRecord {
  runId: string;
  /** 0-based place in the ensemble (the order the members were chosen). */
  position: number;
  /** Its final training (a champion-kind evaluation). */
  evaluationId: string;
  /** The search evaluation that earned it its place. */
  sourceEvaluationId: string;
  genomeHash: string;
  /** Its own score on the held-out test split. */
  testAccuracy: number;
}

/** The latest checkpoint of one evaluation sequence (run, seq), as the store keeps it. */
export interface CheckpointRecord {
  runId: string;
  seq: number;
  /** The attempt that uploaded it. */
  evaluationId: string;
  genomeHash: string;
  sha256: string;
  epoch: number;
  final: boolean;
  bytes: number;
  path: string;
  createdAt: number;
}

/** One entry of the event log. */
/** One event of the log; `K`: its kind when known, which types its detail (see `RUN_EVENT_SCHEMAS`). */
export type EventRecord<K extends RunEventKind = RunEventKind> = { [P in K]: { at: number; kind: P; detail: RunEventDetail<P> } }[K];

/** Why a result is re-run: a random spot check, or because it is about to give a champion candidate. */
export const VERIFICATION_PURPOSES = ['spot-check', 'champion-candidate'] as const;
export type VerificationPurpose = (typeof VERIFICATION_PURPOSES)[number];
export const VERIFICATION_STATES = ['queued', 'done', 'failed', 'timed-out'] as const;
export type VerificationState = (typeof VERIFICATION_STATES)[number];

/** One re-run of a search result on another worker (its own job, outside the run's evaluations). */
export interface VerificationRecord {
  id: string;
  runId: string;
  sourceEvaluationId: string;
  /** 1: the second opinion on the result; 2: the third, asked when the second disagreed. */
  opinion: 1 | 2;
  purpose: VerificationPurpose;
  job: EvaluationJob;
  state: VerificationState;
  queuedAt: number;
  finishedAt: number | null;
  workerId: string | null;
  result: EvaluationResult | null;
  error: string | null;
}

export const VERDICT_KINDS = ['confirmed', 'rejected', 'disputed', 'unverified'] as const;
export type VerdictKind = (typeof VERDICT_KINDS)[number];

/** The final verdict on one verified search result. */
export interface VerdictRecord {
  evaluationId: string;
  runId: string;
  /** The worker that produced the verified result. */
  workerId: string;
  verdict: VerdictKind;
  reason: string;
  decidedAt: number;
}

/** A worker's verification record, over every run of this store. */
export interface WorkerTrustRecord {
  workerId: string;
  agreed: number;
  failed: number;
  quarantinedAt: number | null;
  quarantineReason: string | null;
}

export const CPU_USAGE_KINDS = ['search', 'champion', 'verification'] as const;

/** CPU time and energy of one worker in one run, for one kind of job. */
export interface CpuUsageRow {
  workerId: string;
  kind: (typeof CPU_USAGE_KINDS)[number];
  evaluations: number;
  cpuSeconds: number;
  /** Energy from the watts the worker sent. */
  wattHours: number;
  /** The part of `wattHours` that rests on the worker's default (assumed) watts. */
  assumedWattHours: number;
  /** CPU-seconds of results whose worker sent no watts (the reader applies the default). */
  cpuSecondsWithoutWatts: number;
}
