import { Type, type Static } from '@sinclair/typebox';

export const Sha256Schema = Type.String({ pattern: '^[0-9a-f]{64}$' });

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
  },
  { additionalProperties: false },
);
export type DatasetManifest = Static<typeof DatasetManifestSchema>;
