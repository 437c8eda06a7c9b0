import { Type, type Static } from '@sinclair/typebox';
import { SearchSpaceSchema } from '../genome/search-space-schema.js';

/** The invented demo data: 16×16 grayscale glaze-line tile crops in four classes, made from a seed. */
export const DemoTilesSourceSchema = Type.Object(
  {
    kind: Type.Literal('demo-tiles'),
    samplesPerClass: Type.Integer({ minimum: 10, maximum: 20_000, default: 300 }),
    seed: Type.Integer({ minimum: 0, maximum: 4294967295, default: 7 }),
  },
  { additionalProperties: false },
);

export const DatasetSourceSchema = Type.Union([DemoTilesSourceSchema]);
export type DatasetSource = Static<typeof DatasetSourceSchema>;

export const SearchAlgorithmNameSchema = Type.Union([Type.Literal('aging-evolution'), Type.Literal('random')]);
export type SearchAlgorithmName = Static<typeof SearchAlgorithmNameSchema>;

/** A run file: what to search, on what data, for how long. Every field has a default. */
export const RunConfigSchema = Type.Object(
  {
    name: Type.String({ minLength: 1, maxLength: 120, default: 'run' }),
    /** Seeds the search, the data split and every evaluation. */
    seed: Type.Integer({ minimum: 0, maximum: 4294967295, default: 1 }),
    dataset: DatasetSourceSchema,
    /** Fractions of the data held out for validation and test; the rest trains. */
    split: Type.Object(
      {
        validation: Type.Number({ minimum: 0.05, maximum: 0.5, default: 0.15 }),
        test: Type.Number({ minimum: 0.05, maximum: 0.5, default: 0.15 }),
      },
      { additionalProperties: false, default: {} },
    ),
    search: Type.Object(
      {
        algorithm: Type.Union([SearchAlgorithmNameSchema], { default: 'aging-evolution' }),
        /** Living genomes the parents are drawn from (P). */
        populationSize: Type.Integer({ minimum: 2, maximum: 10_000, default: 20 }),
        /** Members drawn per tournament (S). */
        sampleSize: Type.Integer({ minimum: 1, maximum: 10_000, default: 5 }),
      },
      { additionalProperties: false, default: {} },
    ),
    budget: Type.Object(
      {
        /** Stop proposing after this many recorded search evaluations. */
        maxEvaluations: Type.Integer({ minimum: 1, maximum: 10_000_000, default: 200 }),
        /** Stop proposing after this many minutes of run time. */
        maxMinutes: Type.Number({ exclusiveMinimum: 0, maximum: 525_600, default: 60 }),
      },
      { additionalProperties: false, default: {} },
    ),
    evaluation: Type.Object(
      {
        /** Wall-clock cap on one search training. */
        maxSeconds: Type.Number({ exclusiveMinimum: 0, maximum: 86_400, default: 120 }),
        /** Evaluations that fail this many times are given up (the genome is marked failing). */
        maxAttempts: Type.Integer({ minimum: 1, maximum: 20, default: 3 }),
      },
      { additionalProperties: false, default: {} },
    ),
    champion: Type.Object(
      {
        /** Epochs of the final training on train + validation. */
        epochs: Type.Integer({ minimum: 1, maximum: 1000, default: 15 }),
        maxSeconds: Type.Number({ exclusiveMinimum: 0, maximum: 86_400, default: 600 }),
      },
      { additionalProperties: false, default: {} },
    ),
    searchSpace: Type.Optional(SearchSpaceSchema),
  },
  { additionalProperties: false },
);
export type RunConfig = Static<typeof RunConfigSchema>;
