import { Type, type Static, type TSchema } from '@sinclair/typebox';
import { createValidator } from '../validation.js';

/**
 * Search decisions: every choice a search algorithm makes, with its reason, as the coordinator
 * stores it (one list per call of `propose()` or `observe()`, written in the same transaction as
 * the proposal or the result). A run replays from these (`netbreeder replay`) and its report
 * explains the champion's line with them. Bump the version when a decision's form changes.
 */
export const SEARCH_DECISION_VERSION = 1;

const Nullable = <T extends TSchema>(t: T) => Type.Union([t, Type.Null()]);
const Count = Type.Integer({ minimum: 0 });
const Hash = Type.String({ minLength: 1, maxLength: 128 });
const base = { version: Type.Literal(SEARCH_DECISION_VERSION), reason: Type.String({ maxLength: 4000 }) };

/** A population member or rung result a decision is about. */
export const DecisionMemberSchema = Type.Object(
  {
    evaluationId: Type.String({ minLength: 1 }),
    genomeHash: Hash,
    /** Validation accuracy it was observed with. */
    fitness: Type.Number(),
    /** Multi-objective selection only: its cost (the run's objective), non-domination front (0 = the first) and crowding distance (null: a boundary member, whose distance is infinite). */
    cost: Type.Optional(Type.Number()),
    front: Type.Optional(Count),
    crowding: Type.Optional(Nullable(Type.Number())),
  },
  { additionalProperties: false },
);
export type DecisionMember = Static<typeof DecisionMemberSchema>;

/** A parentless genome: the minimal genome with random mutations. */
export const RandomGenomeDecisionSchema = Type.Object(
  {
    kind: Type.Literal('random-genome'),
    ...base,
    /** `initial`: one of the first P members; `extra-initial`: asked for more before any result; `random-sample`: random search; `fallback`: the chosen parent had no valid mutation. */
    role: Type.Union([Type.Literal('initial'), Type.Literal('extra-initial'), Type.Literal('random-sample'), Type.Literal('fallback')]),
    genomeHash: Hash,
    requested: Count,
    mutations: Type.Array(Type.Object({ operator: Type.String(), detail: Type.String() }, { additionalProperties: false })),
  },
  { additionalProperties: false },
);

/**
 * The run's reference network (the hand-made network for the data kind, fitted to the search
 * space): every algorithm proposes it as its first new configuration.
 */
export const ReferenceNetworkDecisionSchema = Type.Object(
  {
    kind: Type.Literal('reference-network'),
    ...base,
    genomeHash: Hash,
    /** What it is, in one line. */
    description: Type.String({ maxLength: 1000 }),
    /** How it was changed to fit the search space (empty: as written). */
    adjustments: Type.Array(Type.String({ maxLength: 1000 }), { maxItems: 50 }),
  },
  { additionalProperties: false },
);

/** A parent drawn by tournament: every drawn member in draw order, and the winner. */
export const ParentSelectedDecisionSchema = Type.Object(
  {
    kind: Type.Literal('parent-selected'),
    ...base,
    /** `tournament`: the fittest drawn wins; `crowded-tournament`: lower front, then larger crowding distance. The earliest drawn wins among equals. */
    method: Type.Union([Type.Literal('tournament'), Type.Literal('crowded-tournament')]),
    populationSize: Count,
    sampleSize: Count,
    drawn: Type.Array(DecisionMemberSchema),
    winner: DecisionMemberSchema,
  },
  { additionalProperties: false },
);

/** The mutation that made a child from its parent. */
export const MutationDecisionSchema = Type.Object(
  { kind: Type.Literal('mutation'), ...base, parentHash: Hash, childHash: Hash, operator: Type.String(), detail: Type.String() },
  { additionalProperties: false },
);

/** The chosen parent had no valid mutation (a fresh genome was proposed instead). */
export const MutationImpossibleDecisionSchema = Type.Object(
  { kind: Type.Literal('mutation-impossible'), ...base, parentHash: Hash, message: Type.String() },
  { additionalProperties: false },
);

/** Successive halving: a rung result moves up to the next rung. */
export const PromotionDecisionSchema = Type.Object(
  {
    kind: Type.Literal('promotion'),
    ...base,
    fromRung: Count,
    toRung: Count,
    fromEpochs: Count,
    toEpochs: Count,
    /** 1-based place in its rung by fitness. */
    rank: Type.Integer({ minimum: 1 }),
    rungSize: Count,
    /** floor(rungSize / eta): how many of the rung may move up. */
    quota: Count,
    /** The fitness of the last place inside the quota: a result of the rung moves up only at or above it. */
    threshold: Type.Number(),
    member: DecisionMemberSchema,
  },
  { additionalProperties: false },
);

/**
 * Successive halving with `search.promoteReference`: the run's reference network moves up a rung
 * as soon as its result is in, whatever its rank, so the champion's choice always has it trained
 * for the top rung's budget (a hand-made network is often slow to start, and one short rung would
 * judge it too early).
 */
export const ReferencePromotionDecisionSchema = Type.Object(
  {
    kind: Type.Literal('reference-promotion'),
    ...base,
    fromRung: Count,
    toRung: Count,
    fromEpochs: Count,
    toEpochs: Count,
    member: DecisionMemberSchema,
  },
  { additionalProperties: false },
);

/** Successive halving: no rung had an unpromoted result in its top 1/eta, so a new configuration starts at rung 0. */
export const NoPromotionDecisionSchema = Type.Object(
  {
    kind: Type.Literal('no-promotion'),
    ...base,
    /** Each rung below the top, top first: its results, its quota, how many already moved up, and the fitness of the last place inside the quota (null: a quota of 0). */
    rungs: Type.Array(Type.Object({ rung: Count, epochs: Count, size: Count, quota: Count, promoted: Count, threshold: Nullable(Type.Number()) }, { additionalProperties: false })),
  },
  { additionalProperties: false },
);

/** An observed result joins the population (or a rung of successive halving). */
export const MemberAddedDecisionSchema = Type.Object(
  {
    kind: Type.Literal('member-added'),
    ...base,
    member: DecisionMemberSchema,
    /** Successive halving: the rung it entered. */
    rung: Type.Optional(Count),
    /** Members (or rung results) after it joined. */
    size: Count,
  },
  { additionalProperties: false },
);

/** A member leaves the population: the oldest (aging evolution) or the worst by crowded comparison (multi-objective). */
export const MemberRemovedDecisionSchema = Type.Object(
  { kind: Type.Literal('member-removed'), ...base, rule: Type.Union([Type.Literal('oldest'), Type.Literal('crowded-worst')]), member: DecisionMemberSchema },
  { additionalProperties: false },
);

/** An observation changed nothing: a repeated result, or a budget that is no rung's. */
export const ObservationIgnoredDecisionSchema = Type.Object(
  {
    kind: Type.Literal('observation-ignored'),
    ...base,
    evaluationId: Type.String({ minLength: 1 }),
    genomeHash: Hash,
    why: Type.Union([Type.Literal('duplicate'), Type.Literal('off-rung'), Type.Literal('counted-only')]),
  },
  { additionalProperties: false },
);

/** The coordinator refused a genome (it breaks the search space) or a result (it failed its checks). */
export const RejectedDecisionSchema = Type.Object(
  {
    kind: Type.Literal('rejected'),
    ...base,
    subject: Type.Union([Type.Literal('genome'), Type.Literal('result')]),
    evaluationId: Nullable(Type.String()),
    genomeHash: Nullable(Hash),
    issues: Type.Array(Type.String({ maxLength: 2000 }), { maxItems: 50 }),
  },
  { additionalProperties: false },
);

/**
 * Results taken out of the search as if they had never arrived: those of a worker quarantined by
 * verification (their evaluation ids, in the order the algorithm let them go).
 */
export const ResultsForgottenDecisionSchema = Type.Object(
  { kind: Type.Literal('results-forgotten'), ...base, evaluationIds: Type.Array(Type.String({ minLength: 1 }), { maxItems: 1_000_000 }) },
  { additionalProperties: false },
);

export const SearchDecisionSchema = Type.Union([
  RandomGenomeDecisionSchema,
  ReferenceNetworkDecisionSchema,
  ParentSelectedDecisionSchema,
  MutationDecisionSchema,
  MutationImpossibleDecisionSchema,
  PromotionDecisionSchema,
  ReferencePromotionDecisionSchema,
  NoPromotionDecisionSchema,
  MemberAddedDecisionSchema,
  MemberRemovedDecisionSchema,
  ObservationIgnoredDecisionSchema,
  RejectedDecisionSchema,
  ResultsForgottenDecisionSchema,
]);
export type SearchDecision = Static<typeof SearchDecisionSchema>;
export type SearchDecisionKind = SearchDecision['kind'];

/**
 * One recorded step of a run's search, in the order the coordinator made them: a `propose` or
 * `observe` call of the algorithm with the decisions it returned, a genome the user `submit`ted
 * (the algorithm was not asked), a `reject`ion by the coordinator (no algorithm call), or a
 * `forget` call that took a quarantined worker's results out of the search.
 */
export const SearchStepSchema = Type.Object(
  {
    runId: Type.String(),
    /** 0, 1, 2, … within the run. */
    step: Count,
    kind: Type.Union([Type.Literal('propose'), Type.Literal('observe'), Type.Literal('submit'), Type.Literal('reject'), Type.Literal('forget')]),
    /** The evaluation proposed (propose, submit), observed (observe) or refused (reject); null for a refused proposal that was never queued. */
    evaluationId: Nullable(Type.String()),
    /** The genome proposed or observed. */
    genomeHash: Nullable(Hash),
    /** Proposals: the parents and the training budget asked for (null: the genome's own epochs). */
    parentHashes: Type.Array(Hash),
    budgetEpochs: Nullable(Count),
    /** The algorithm's one-line reason for a proposal; a refusal's reason; empty for an observation (its decisions say it). */
    reason: Type.String(),
    decisions: Type.Array(SearchDecisionSchema),
    at: Type.Integer(),
  },
  { additionalProperties: false },
);
export type SearchStep = Static<typeof SearchStepSchema>;

export const searchDecisionValidator = createValidator('search decision', SearchDecisionSchema);
export const searchStepValidator = createValidator('search step', SearchStepSchema);
