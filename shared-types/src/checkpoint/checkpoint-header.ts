import { Type, type Static } from '@sinclair/typebox';
import { Sha256Schema } from '../messages/dataset-manifest.js';
import { BackendNameSchema, EpochRecordSchema } from '../messages/evaluation-result.js';

/** Version of the checkpoint file layout and header; a reader refuses any other. */
export const CHECKPOINT_FORMAT_VERSION = 1;

const Uint32 = Type.Integer({ minimum: 0, maximum: 4294967295 });
/** The four 32-bit words of a seeded random source (`Random.state()`), to continue its sequence. */
export const RandomStateSchema = Type.Tuple([Uint32, Uint32, Uint32, Uint32]);

/**
 * One array stored in the data section. `group` says what it restores:
 * - `weight`: a model weight, in `model.weights` order (`name` is its layer-scoped name, e.g. `c1/kernel`);
 * - `optimizer`: one entry of the optimizer's `getWeights()` (its iteration count first, then its slots);
 * - `optimizer-extra`: optimizer state that `setWeights()` does not restore exactly (Adam's running
 *   powers of beta1 and beta2, which `setWeights` recomputes with `pow` instead of the running product, so they may differ in the last bits);
 * - `order`: the shuffled sample order the next epoch's shuffle starts from.
 */
export const CheckpointTensorSchema = Type.Object(
  {
    group: Type.Union([Type.Literal('weight'), Type.Literal('optimizer'), Type.Literal('optimizer-extra'), Type.Literal('order')]),
    name: Type.String({ minLength: 1, maxLength: 300 }),
    dtype: Type.Union([Type.Literal('float32'), Type.Literal('int32')]),
    shape: Type.Array(Type.Integer({ minimum: 0 }), { maxItems: 8 }),
    /** Byte offset of the values from the start of the data section (a multiple of 4). */
    offset: Type.Integer({ minimum: 0 }),
  },
  { additionalProperties: false },
);
export type CheckpointTensor = Static<typeof CheckpointTensorSchema>;

/**
 * The JSON header of a training checkpoint (see `checkpoint-codec.ts` for the byte layout): which
 * training it belongs to, how far it got, and the state a resumed training needs to continue the
 * same sequence of batches and dropout masks.
 */
export const CheckpointHeaderSchema = Type.Object(
  {
    formatVersion: Type.Literal(CHECKPOINT_FORMAT_VERSION),
    runId: Type.String({ pattern: '^[A-Za-z0-9_-]{1,64}$' }),
    evaluationId: Type.String({ pattern: '^[A-Za-z0-9_-]{1,80}$' }),
    genomeHash: Sha256Schema,
    /** The training seed of the evaluation that wrote it. */
    seed: Uint32,
    /** Epochs completed when it was taken. */
    epoch: Type.Integer({ minimum: 1, maximum: 1000 }),
    /** True when the training had ended (the last epoch of its budget, or a budget limit). */
    final: Type.Boolean(),
    backend: BackendNameSchema,
    optimizer: Type.Union([Type.Literal('adam'), Type.Literal('sgd'), Type.Literal('rmsprop')]),
    rng: Type.Object(
      {
        /** The shuffling source, after the last completed epoch's shuffle. */
        shuffle: RandomStateSchema,
        /** Each seeded dropout layer's mask source, by layer name. */
        dropout: Type.Array(Type.Object({ layer: Type.String({ minLength: 1, maxLength: 200 }), state: RandomStateSchema }, { additionalProperties: false }), { maxItems: 10_000 }),
      },
      { additionalProperties: false },
    ),
    /** Samples trained so far, and seconds spent in training steps so far. */
    samplesSeen: Type.Integer({ minimum: 0 }),
    stepSeconds: Type.Number({ minimum: 0 }),
    /** Every completed epoch's record, so a resumed result carries the whole curve. */
    history: Type.Array(EpochRecordSchema, { maxItems: 1000 }),
    tensors: Type.Array(CheckpointTensorSchema, { maxItems: 100_000 }),
  },
  { additionalProperties: false },
);
export type CheckpointHeader = Static<typeof CheckpointHeaderSchema>;
