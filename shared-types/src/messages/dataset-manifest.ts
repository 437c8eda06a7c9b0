import { Type, type Static } from '@sinclair/typebox';

export const Sha256Schema = Type.String({ pattern: '^[0-9a-f]{64}$' });

/**
 * The numeric target of a regression run and how it was standardised: networks train on
 * `(value - mean) / std`, both fitted on the training split, and every figure shown to a person is
 * turned back into the target's own units with them.
 */
export const TargetScalingSchema = Type.Object(
  {
    column: Type.String({ minLength: 1, maxLength: 200 }),
    mean: Type.Number(),
    std: Type.Number({ exclusiveMinimum: 0 }),
    /** Training loss on the standardised target (the run file's `regressionLoss`); absent: mean squared error. */
    loss: Type.Optional(Type.Literal('huber')),
  },
  { additionalProperties: false },
);
export type TargetScaling = Static<typeof TargetScalingSchema>;

/**
 * What a worker needs to know of a run's dataset: where to fetch the training shard, the hash that
 * proves it arrived whole, and the shapes the genome is built for. The held-out test split is never
 * in a shard: it stays on the coordinator.
 */
export const DatasetManifestSchema = Type.Object(
  {
    /** sha256 of the shard file; also its name in every cache. */
    sha256: Sha256Schema,
    /** Size of the shard file in bytes. */
    bytes: Type.Integer({ minimum: 1 }),
    /** Sample shape without the batch axis: [features] or [height, width, channels]. */
    inputShape: Type.Array(Type.Integer({ minimum: 1, maximum: 1_000_000 }), { minItems: 1, maxItems: 3 }),
    numClasses: Type.Integer({ minimum: 2, maximum: 10_000 }),
    classNames: Type.Array(Type.String({ maxLength: 200 }), { minItems: 2, maxItems: 10_000 }),
    trainCount: Type.Integer({ minimum: 1 }),
    valCount: Type.Integer({ minimum: 1 }),
    /**
     * Present for a regression run: the shard carries one standardised target per sample, the
     * network's head is one linear unit, and `classNames` are only the target quantile bins the
     * split was stratified by. Absent: classification.
     */
    target: Type.Optional(TargetScalingSchema),
  },
  { additionalProperties: false },
);
export type DatasetManifest = Static<typeof DatasetManifestSchema>;

/** The data shape every genome of a run is built for, as its dataset manifest fixes it. */
export const dataShapeOf = (m: DatasetManifest): { inputShape: number[]; numClasses: number; target?: TargetScaling } =>
  m.target ? { inputShape: m.inputShape, numClasses: m.numClasses, target: m.target } : { inputShape: m.inputShape, numClasses: m.numClasses };
