import { Type, type Static } from '@sinclair/typebox';
import { GenomeSchema } from '../genome/genome-schema.js';
import { DatasetManifestSchema, Sha256Schema } from './dataset-manifest.js';
import { CheckpointRefSchema } from '../checkpoint/checkpoint-ref.js';

export const EVALUATION_JOB_VERSION = 1;

/** Bounds one training: whichever limit is reached first ends it. */
export const TrainingBudgetSchema = Type.Object(
  {
    epochs: Type.Integer({ minimum: 1, maximum: 1000 }),
    /** Wall-clock cap on training, checked between batches. */
    maxSeconds: Type.Number({ exclusiveMinimum: 0, maximum: 86_400 }),
    /** Optional cap on training samples seen (a sample budget for cheap, low-fidelity runs). */
    maxSamples: Type.Optional(Type.Integer({ minimum: 1 })),
  },
  { additionalProperties: false },
);
export type TrainingBudget = Static<typeof TrainingBudgetSchema>;

/** When a search training uploads checkpoints (absent: never). */
export const CheckpointPolicySchema = Type.Object(
  {
    /** Upload after every this many epochs; 0 = only the final one (when `final`). */
    everyEpochs: Type.Integer({ minimum: 0, maximum: 1000 }),
    /** Also upload the checkpoint of the training's end (weight inheritance needs it). */
    final: Type.Boolean(),
    /** Largest checkpoint the coordinator accepts, in bytes; a larger one is not uploaded. */
    maxBytes: Type.Integer({ minimum: 1 }),
  },
  { additionalProperties: false },
);
export type CheckpointPolicy = Static<typeof CheckpointPolicySchema>;

/**
 * Weights a search training starts from instead of a fresh initialisation (weight inheritance):
 * `own-checkpoint`, a promoted candidate's own checkpoint of its lower rung (it continues from
 * that epoch); `parent-weights`, the final weights of the parent genome, copied layer by layer
 * where names and shapes match.
 */
export const WeightSourceSchema = Type.Object(
  {
    kind: Type.Union([Type.Literal('own-checkpoint'), Type.Literal('parent-weights')]),
    checkpoint: CheckpointRefSchema,
  },
  { additionalProperties: false },
);
export type WeightSource = Static<typeof WeightSourceSchema>;

/**
 * The payload of one BullMQ job: train this genome on this dataset within this budget.
 * `kind: 'search'` trains on the train split and scores on validation; `kind: 'champion'` trains on
 * train + validation with a longer budget and sends back the trained weights, which the coordinator
 * scores on the held-out test split.
 */
export const EvaluationJobSchema = Type.Object(
  {
    schemaVersion: Type.Literal(EVALUATION_JOB_VERSION),
    kind: Type.Union([Type.Literal('search'), Type.Literal('champion')]),
    /** Also the BullMQ job id, so the result is recorded at most once. */
    evaluationId: Type.String({ pattern: '^[A-Za-z0-9_-]{1,80}$' }),
    runId: Type.String({ pattern: '^[A-Za-z0-9_-]{1,64}$' }),
    attempt: Type.Integer({ minimum: 1, maximum: 100 }),
    genome: GenomeSchema,
    genomeHash: Sha256Schema,
    /** Seeds initializers, shuffling and dropout, so the same job trains the same way on one backend. */
    seed: Type.Integer({ minimum: 0, maximum: 4294967295 }),
    budget: TrainingBudgetSchema,
    dataset: DatasetManifestSchema,
    /** When to upload checkpoints; absent: never. */
    checkpoints: Type.Optional(CheckpointPolicySchema),
    /** The latest checkpoint of an earlier attempt of this evaluation, known when it was reissued. */
    resume: Type.Optional(CheckpointRefSchema),
    /** Weights to start from (weight inheritance); ignored when a `resume` checkpoint is used. */
    inherit: Type.Optional(WeightSourceSchema),
    /**
     * Worker ids that must not run this job: a verification job names the worker(s) whose result
     * it re-checks and the quarantined workers. A named worker hands the job back to the queue
     * without training it (and waits a few seconds before taking another). Absent: any worker.
     */
    excludeWorkers: Type.Optional(Type.Array(Type.String({ pattern: '^[A-Za-z0-9_.:-]{1,128}$' }), { maxItems: 1000 })),
    /** Set on a verification job: the id of the search evaluation whose result it re-runs (same genome, seed and budget). */
    verifies: Type.Optional(Type.String({ pattern: '^[A-Za-z0-9_-]{1,80}$' })),
    /**
     * Set on a champion job whose run holds validation data back for the final choice: the first
     * `selectionHoldout` samples of the validation split are left out of the final training (which
     * trains on train + the rest of validation, for its whole length: no early stop), and the
     * result's validation accuracy is the final weights' score on them. Absent: train + all of
     * validation, no validation score.
     */
    selectionHoldout: Type.Optional(Type.Integer({ minimum: 1 })),
  },
  { additionalProperties: false },
);
export type EvaluationJob = Static<typeof EvaluationJobSchema>;

/**
 * A worker that fails a job in a way no retry can fix (the genome is too large for any worker, the
 * payload is invalid) starts the failure reason with this prefix; the coordinator then gives the
 * evaluation up instead of reissuing it.
 */
export const DO_NOT_RETRY_PREFIX = 'do-not-retry: ';
