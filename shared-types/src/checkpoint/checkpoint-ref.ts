import { Type, type Static } from '@sinclair/typebox';
import { Sha256Schema } from '../messages/dataset-manifest.js';

/** Where a checkpoint is and what it holds, as jobs and the coordinator's API pass it around. */
export const CheckpointRefSchema = Type.Object(
  {
    sha256: Sha256Schema,
    /** Size of the file in bytes. */
    bytes: Type.Integer({ minimum: 1 }),
    /** Epochs completed when it was taken. */
    epoch: Type.Integer({ minimum: 1, maximum: 1000 }),
    /** The evaluation (attempt) that uploaded it. */
    evaluationId: Type.String({ pattern: '^[A-Za-z0-9_-]{1,80}$' }),
  },
  { additionalProperties: false },
);
export type CheckpointRef = Static<typeof CheckpointRefSchema>;

/**
 * How a training started, recorded in its result:
 * - `fresh`: from initialised weights at epoch 0 (also when a checkpoint could not be used: see `note`);
 * - `resumed`: from the latest checkpoint of an earlier attempt of the same evaluation;
 * - `own-checkpoint`: a promoted candidate continuing from its own lower-rung checkpoint;
 * - `parent-weights`: a child starting from its parent's final weights where names and shapes match.
 */
export const TrainingStartSchema = Type.Object(
  {
    kind: Type.Union([Type.Literal('fresh'), Type.Literal('resumed'), Type.Literal('own-checkpoint'), Type.Literal('parent-weights')]),
    /** Epochs already trained when this attempt started (0 unless resumed or continuing its own checkpoint). */
    fromEpoch: Type.Integer({ minimum: 0, maximum: 1000 }),
    checkpointSha256: Type.Union([Sha256Schema, Type.Null()]),
    /** The evaluation that wrote the checkpoint used. */
    fromEvaluationId: Type.Union([Type.String({ maxLength: 80 }), Type.Null()]),
    /** Weights taken from the checkpoint, of the model's weights. */
    copiedWeights: Type.Integer({ minimum: 0 }),
    totalWeights: Type.Integer({ minimum: 0 }),
    /** Why a checkpoint offered was not used (missing, failed its hash, did not fit), or null. */
    note: Type.Union([Type.String({ maxLength: 1000 }), Type.Null()]),
  },
  { additionalProperties: false },
);
export type TrainingStart = Static<typeof TrainingStartSchema>;
