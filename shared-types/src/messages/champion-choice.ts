import { Type, type Static } from '@sinclair/typebox';
import { createValidator } from '../validation.js';
import { EnsembleSettingsSchema } from './run-config.js';

const GenomeHash = Type.String({ pattern: '^[0-9a-f]{64}$' });

/** POST /runs/:id/champion/pick: the genome the user wants as the champion (one with a finished search result in the run). */
export const ChampionPickRequestSchema = Type.Object({ genomeHash: GenomeHash }, { additionalProperties: false });
export type ChampionPickRequest = Static<typeof ChampionPickRequestSchema>;

/** The accepted pick: the genome and its best search result. */
export const ChampionPickResponseSchema = Type.Object(
  {
    runId: Type.String(),
    genomeHash: GenomeHash,
    evaluationId: Type.String(),
    valAccuracy: Type.Number({ minimum: 0, maximum: 1 }),
    /** Its validation score in words for a person: a percentage, or a regression run's RMSE in the target's units. */
    validation: Type.Optional(Type.String({ maxLength: 200 })),
    /** True when the run had finished: the picked genome is being trained now and replaces the champion when done. */
    retraining: Type.Boolean(),
  },
  { additionalProperties: false },
);
export type ChampionPickResponse = Static<typeof ChampionPickResponseSchema>;

/** One finished search evaluation as a point of accuracy against cost. */
export const FrontPointSchema = Type.Object(
  {
    evaluationId: Type.String(),
    genomeHash: GenomeHash,
    valAccuracy: Type.Number({ minimum: 0, maximum: 1 }),
    /** The objective's value: parameters, FLOPs per sample, or ms per sample alone on the worker's CPU. */
    cost: Type.Number({ minimum: 0 }),
    /** True when no other result is at least as accurate and at most as costly, and better in one. */
    onFront: Type.Boolean(),
  },
  { additionalProperties: false },
);
export type FrontPoint = Static<typeof FrontPointSchema>;

/**
 * GET /runs/:id/front?objective=params|flops|latency: every finished search result as accuracy
 * against cost, and the non-dominated front among them (in increasing cost).
 */
export const FrontResponseSchema = Type.Object(
  {
    runId: Type.String(),
    objective: Type.Union([Type.Literal('params'), Type.Literal('flops'), Type.Literal('latency')]),
    /** True when the run's search weighs accuracy against a cost (pareto-evolution). */
    multiObjective: Type.Boolean(),
    /** The run's own objective (what its search minimised, or `params` for single-objective runs). */
    runObjective: Type.Union([Type.Literal('params'), Type.Literal('flops'), Type.Literal('latency')]),
    points: Type.Array(FrontPointSchema),
    /** Evaluation ids of the front, in increasing cost. */
    front: Type.Array(Type.String()),
    /** Results left out because they have no value of the objective (latency from older workers). */
    withoutCost: Type.Integer({ minimum: 0 }),
  },
  { additionalProperties: false },
);
export type FrontResponse = Static<typeof FrontResponseSchema>;

/** POST /runs/:id/ensemble: a new averaging ensemble for a finished run, with the settings of the run file's `champion.ensemble` (the penalty may be left out for its default). */
export const EnsembleRequestSchema = Type.Object(
  { size: EnsembleSettingsSchema.properties.size, diversityPenalty: Type.Optional(EnsembleSettingsSchema.properties.diversityPenalty) },
  { additionalProperties: false },
);

/** POST /runs/:id/ensemble answers: the chosen members, now training. */
export const EnsembleRequestResponseSchema = Type.Object(
  {
    runId: Type.String(),
    /** The champion round training them; GET /runs/:id/champion shows `ensemble.round` equal to it once scored. */
    round: Type.Integer({ minimum: 1 }),
    members: Type.Array(
      Type.Object(
        {
          genomeHash: GenomeHash,
          valAccuracy: Type.Number(),
          /** Its validation score in words for a person: a percentage, or a regression run's RMSE in the target's units. */
          validation: Type.Optional(Type.String({ maxLength: 200 })),
          similarity: Type.Number({ minimum: 0, maximum: 1 }),
        },
        { additionalProperties: false },
      ),
    ),
  },
  { additionalProperties: false },
);
export type EnsembleRequestResponse = Static<typeof EnsembleRequestResponseSchema>;

export const ensembleRequestResponseValidator = createValidator('ensemble request response', EnsembleRequestResponseSchema);
export const championPickRequestValidator = createValidator('champion pick', ChampionPickRequestSchema);
export const championPickResponseValidator = createValidator('champion pick response', ChampionPickResponseSchema);
export const frontResponseValidator = createValidator('front response', FrontResponseSchema);
