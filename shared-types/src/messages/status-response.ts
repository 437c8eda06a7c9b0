import { Type, type Static } from '@sinclair/typebox';
import { GenomeSchema } from '../genome/genome-schema.js';
import { BackendNameSchema, RegressionScoresSchema, RegressionTestScoresSchema } from './evaluation-result.js';
import { WorkerStateSchema } from './worker-heartbeat.js';
import { AccountingStatusSchema, CpuFiguresSchema, VerificationStatusSchema, WorkerTrustStatusSchema } from './trust-status.js';

/** A run's lifecycle: searching (⇄ paused) → training-champion → finished, or failed / stopped. */
export const RunStateSchema = Type.Union([Type.Literal('preparing'), Type.Literal('searching'), Type.Literal('paused'), Type.Literal('training-champion'), Type.Literal('finished'), Type.Literal('failed'), Type.Literal('stopped')]);
export type RunState = Static<typeof RunStateSchema>;

/**
 * What a run is doing now, for the people watching it: its state, except `verifying` while a
 * searching run has spent its budget (or was asked to finish) and waits for open verifications
 * before it trains the champion.
 */
export const RunPhaseSchema = Type.Union([RunStateSchema, Type.Literal('verifying')]);
export type RunPhase = Static<typeof RunPhaseSchema>;

const Nullable = <T extends import('@sinclair/typebox').TSchema>(t: T) => Type.Union([t, Type.Null()]);

/**
 * Classification runs carry `valAccuracy` (and the champion `testAccuracy`); regression runs carry
 * no accuracy but the `…Regression` scores in the target's units, and the search fitness
 * 1 / (1 + standardised RMSE) under its own name, `valFitness` (`testFitness`).
 */
export const ScoredGenomeSchema = Type.Object({
  genomeHash: Type.String(),
  evaluationId: Type.String(),
  valAccuracy: Type.Optional(Type.Number()),
  /** Regression runs: the search fitness 1 / (1 + standardised validation RMSE), what the search ranks by. */
  valFitness: Type.Optional(Type.Number()),
  valLoss: Type.Number(),
  /** Regression runs: validation RMSE, MAE and R² in the target's units. */
  valRegression: Type.Optional(RegressionScoresSchema),
  paramCount: Type.Integer(),
  flops: Type.Integer(),
  summary: Type.String(),
  genome: GenomeSchema,
});
export type ScoredGenome = Static<typeof ScoredGenomeSchema>;

export const WorkerStatusSchema = Type.Object({
  workerId: Type.String(),
  host: Type.String(),
  cores: Type.Integer(),
  backend: Nullable(BackendNameSchema),
  state: WorkerStateSchema,
  alive: Type.Boolean(),
  currentEvaluationId: Nullable(Type.String()),
  evaluationsDone: Type.Integer(),
  samplesPerSecond: Type.Number(),
  lastHeartbeatAt: Type.String({ format: 'date-time' }),
  secondsSinceHeartbeat: Type.Number(),
  /** Verification record and quarantine (see coordinator/src/trust/). */
  trust: Type.Optional(WorkerTrustStatusSchema),
  /** This worker's CPU time and energy in the run. */
  cpu: Type.Optional(CpuFiguresSchema),
  /** Watts per busy core the worker sent, and whether that is the default assumption. */
  watts: Type.Optional(Type.Number()),
  wattsAssumed: Type.Optional(Type.Boolean()),
});
export type WorkerStatus = Static<typeof WorkerStatusSchema>;

export const ChampionSummarySchema = Type.Object({
  genomeHash: Type.String(),
  evaluationId: Type.String(),
  /** Classification runs only (regression runs: `valFitness`, `testFitness` and `testRegression`). */
  valAccuracy: Type.Optional(Type.Number()),
  testAccuracy: Type.Optional(Type.Number()),
  valFitness: Type.Optional(Type.Number()),
  testFitness: Type.Optional(Type.Number()),
  testLoss: Type.Number(),
  /** Regression runs: test RMSE, MAE, R² in the target's units and the RMSE of predicting the training mean. */
  testRegression: Type.Optional(RegressionTestScoresSchema),
  paramCount: Type.Integer(),
  flops: Type.Integer(),
  summary: Type.String(),
});
export type ChampionSummary = Static<typeof ChampionSummarySchema>;

/**
 * The champion's held-out test score beside the run's reference network's (the hand-made network
 * trained in every run), each scored once, and the one plain line that compares them.
 */
export const ReferenceComparisonSchema = Type.Object({
  /** `scored`: both scored; `pending`: not yet; `skipped`: the reference could not fit the search space, or its final training failed; `off`: the run has none. */
  state: Type.Union([Type.Literal('scored'), Type.Literal('pending'), Type.Literal('skipped'), Type.Literal('off')]),
  referenceGenomeHash: Nullable(Type.String()),
  championTestAccuracy: Nullable(Type.Number()),
  referenceTestAccuracy: Nullable(Type.Number()),
  /** Champion minus reference, in percentage points of test accuracy (null for regression). */
  points: Nullable(Type.Number()),
  /** Regression runs: each one's test RMSE in the target's units. */
  championTestRmse: Type.Optional(Nullable(Type.Number())),
  referenceTestRmse: Type.Optional(Nullable(Type.Number())),
  championIsReference: Type.Boolean(),
  line: Type.String(),
});
export type ReferenceComparisonStatus = Static<typeof ReferenceComparisonSchema>;

/** GET /status: everything a person watching a run needs at a glance. */
export const StatusResponseSchema = Type.Object({
  coordinator: Type.Object({ version: Type.String(), startedAt: Type.String(), uptimeSeconds: Type.Number() }),
  run: Nullable(
    Type.Object({
      id: Type.String(),
      name: Type.String(),
      state: RunStateSchema,
      /** The state as the dashboard and the CLI show it (see {@link RunPhaseSchema}); absent from coordinators before it. */
      phase: Type.Optional(RunPhaseSchema),
      algorithm: Type.String(),
      seed: Type.Integer(),
      createdAt: Type.String(),
      maxEvaluations: Type.Integer(),
      maxMinutes: Type.Number(),
      elapsedSeconds: Type.Number(),
      /** Present for a regression run: the column it predicts (RMSE and MAE are in its units). */
      target: Type.Optional(Type.String()),
    }),
  ),
  evaluations: Type.Object({
    queued: Type.Integer(),
    running: Type.Integer(),
    done: Type.Integer(),
    failed: Type.Integer(),
  }),
  throughput: Type.Object({
    perMinuteLastMinute: Type.Number(),
    perMinuteSinceStart: Type.Number(),
  }),
  workers: Type.Array(WorkerStatusSchema),
  best: Nullable(ScoredGenomeSchema),
  champion: Nullable(ChampionSummarySchema),
  /** The champion against the reference network (absent: no run). */
  reference: Type.Optional(ReferenceComparisonSchema),
  /** CPU-seconds and energy of the run: in total, by kind of job (per worker in `workers`). */
  accounting: Type.Optional(AccountingStatusSchema),
  verification: Type.Optional(VerificationStatusSchema),
});
export type StatusResponse = Static<typeof StatusResponseSchema>;
