import { Type, type Static, type TSchema } from '@sinclair/typebox';
import { createValidator } from '../validation.js';
import { BackendNameSchema } from './evaluation-result.js';

/**
 * Answers of the coordinator's dashboard routes (`GET /runs/:id/evaluations`, `/throughput`,
 * `/top`, `/lineage/:genomeHash`). Times are milliseconds since the epoch, so the page can plot
 * them without parsing dates.
 */

const Nullable = <T extends TSchema>(t: T) => Type.Union([t, Type.Null()]);

/** One finished (done or failed) search evaluation, as a point on the dashboard's charts. */
export const EvaluationPointSchema = Type.Object({
  evaluationId: Type.String(),
  /** Proposal number within the run (attempts of one proposal share it). */
  seq: Type.Integer({ minimum: 0 }),
  attempt: Type.Integer({ minimum: 1 }),
  state: Type.Union([Type.Literal('done'), Type.Literal('failed')]),
  genomeHash: Type.String(),
  /** When the coordinator recorded the result, ms since the epoch. */
  finishedAt: Type.Integer(),
  /** Null for a failed attempt. In a regression run it holds the search fitness 1 / (1 + standardised RMSE): plot `valRmse` instead. */
  valAccuracy: Nullable(Type.Number()),
  /** Regression runs, done attempts: validation RMSE in the target's units. */
  valRmse: Type.Optional(Type.Number({ minimum: 0 })),
  params: Type.Integer({ minimum: 0 }),
  flops: Type.Integer({ minimum: 0 }),
  trainSeconds: Nullable(Type.Number()),
  samplesPerSecond: Nullable(Type.Number()),
  workerId: Nullable(Type.String()),
  backend: Nullable(BackendNameSchema),
});
export type EvaluationPoint = Static<typeof EvaluationPointSchema>;

/**
 * GET /runs/:id/evaluations?since=MS: the evaluations finished at or after `since`, oldest first.
 * Ask again with `since = cursor`; the evaluations finished exactly at the cursor's millisecond
 * come again, so a client keeps points by `evaluationId`.
 */
export const EvaluationsResponseSchema = Type.Object({
  runId: Type.String(),
  /** Pass as `since` next time. */
  cursor: Type.Integer({ minimum: 0 }),
  /** True when `limit` cut the answer short: ask again at once with the new cursor. */
  more: Type.Boolean(),
  evaluations: Type.Array(EvaluationPointSchema),
});
export type EvaluationsResponse = Static<typeof EvaluationsResponseSchema>;

/** One time bucket of a run's throughput. */
export const ThroughputBucketSchema = Type.Object({
  /** Bucket start, ms since the epoch. */
  start: Type.Integer(),
  /** Search evaluations that finished (done) in the bucket. */
  evaluations: Type.Integer({ minimum: 0 }),
  /** The same, per minute. */
  evaluationsPerMinute: Type.Number({ minimum: 0 }),
  /** Training samples per second summed over all workers: each evaluation's samples spread over its training time. */
  samplesPerSecond: Type.Number({ minimum: 0 }),
});
export type ThroughputBucket = Static<typeof ThroughputBucketSchema>;

/** GET /runs/:id/throughput: throughput over time, computed from finished evaluations in the store. */
export const ThroughputResponseSchema = Type.Object({
  runId: Type.String(),
  bucketSeconds: Type.Integer({ minimum: 1 }),
  buckets: Type.Array(ThroughputBucketSchema),
});
export type ThroughputResponse = Static<typeof ThroughputResponseSchema>;

/** One of a run's best genomes. */
export const TopGenomeSchema = Type.Object({
  rank: Type.Integer({ minimum: 1 }),
  evaluationId: Type.String(),
  seq: Type.Integer({ minimum: 0 }),
  genomeHash: Type.String(),
  summary: Type.String(),
  /** In a regression run the search fitness 1 / (1 + standardised RMSE): show `valRmse` instead. */
  valAccuracy: Type.Number(),
  /** Regression runs: validation RMSE in the target's units. */
  valRmse: Type.Optional(Type.Number({ minimum: 0 })),
  params: Type.Integer({ minimum: 0 }),
  flops: Type.Integer({ minimum: 0 }),
  trainSeconds: Nullable(Type.Number()),
  workerId: Nullable(Type.String()),
});
export type TopGenome = Static<typeof TopGenomeSchema>;

/** GET /runs/:id/top?limit=K: the best evaluation of each distinct genome, best validation accuracy first, then fewest parameters. */
export const TopGenomesResponseSchema = Type.Object({
  runId: Type.String(),
  genomes: Type.Array(TopGenomeSchema),
});
export type TopGenomesResponse = Static<typeof TopGenomesResponseSchema>;

/** A genome on a lineage chain, with its best validation accuracy in the run (null if none yet). */
export const LineageGenomeSchema = Type.Object({
  genomeHash: Type.String(),
  summary: Type.String(),
  params: Type.Integer({ minimum: 0 }),
  flops: Type.Integer({ minimum: 0 }),
  /** In a regression run the search fitness 1 / (1 + standardised RMSE): show `valRmse` instead. */
  valAccuracy: Nullable(Type.Number()),
  /** Regression runs, scored genomes: the best validation RMSE in the target's units. */
  valRmse: Type.Optional(Type.Number({ minimum: 0 })),
});
export type LineageGenome = Static<typeof LineageGenomeSchema>;

/** One mutation on the way from the minimal ancestor to the genome asked for. */
export const LineageStepSchema = Type.Object({
  evaluationId: Type.String(),
  operator: Type.String(),
  detail: Type.String(),
  parentHash: Type.String(),
  child: LineageGenomeSchema,
});
export type LineageStep = Static<typeof LineageStepSchema>;

/** GET /runs/:id/lineage/:genomeHash: the ancestor without a recorded parent, then each mutation in order. */
export const LineageResponseSchema = Type.Object({
  runId: Type.String(),
  genomeHash: Type.String(),
  ancestor: LineageGenomeSchema,
  steps: Type.Array(LineageStepSchema),
});
export type LineageResponse = Static<typeof LineageResponseSchema>;

export const evaluationsResponseValidator = createValidator('evaluations response', EvaluationsResponseSchema);
export const throughputResponseValidator = createValidator('throughput response', ThroughputResponseSchema);
export const topGenomesResponseValidator = createValidator('top genomes response', TopGenomesResponseSchema);
export const lineageResponseValidator = createValidator('lineage response', LineageResponseSchema);
