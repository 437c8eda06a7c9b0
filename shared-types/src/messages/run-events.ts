import { Type, type Static, type TLiteral, type TSchema, type TUnion } from '@sinclair/typebox';
import { createValidator, type Validator } from '../validation.js';
import { BackendNameSchema, RegressionTestScoresSchema } from './evaluation-result.js';
import { ChampionRuleSchema, EnsembleSettingsSchema } from './run-config.js';
import { InternalError } from '../errors/netbreeder-error.js';

/**
 * The coordinator's event log: one schema per kind of event, so every event is checked when it is
 * written and read back typed. An event belongs to a run, or to no run (a revoked worker, a
 * refused request). Kinds are named after what happened, in the past tense where they can be.
 */

const Id = Type.String({ minLength: 1, maxLength: 200 });
const Hash = Type.String({ pattern: '^[0-9a-f]{64}$' });
const Text = Type.String({ maxLength: 20_000 });
const Count = Type.Integer({ minimum: 0 });
const Share = Type.Number({ minimum: 0, maximum: 1 });
/** One of the given strings. */
const OneOf = <const T extends string[]>(...values: T) => Type.Union(values.map((v) => Type.Literal(v))) as unknown as TUnion<{ [K in keyof T]: TLiteral<T[K]> }>;
const RunState = OneOf('preparing', 'searching', 'paused', 'stopped', 'training-champion', 'finished', 'failed');
const Strict = <T extends Parameters<typeof Type.Object>[0]>(properties: T) => Type.Object(properties, { additionalProperties: false });

/** A genome the champion phase trains again: the champion, an ensemble member, the reference network. */
export const ChampionCandidateSchema = Strict({
  sourceEvaluationId: Id,
  genomeHash: Hash,
  /** Key of its final training's evaluation ids: the source's proposal number (past every proposal for a pick after the run finished). */
  seq: Count,
  valAccuracy: Share,
  /** Whether it competes to be the champion (absent in runs recorded before ensembles: it does). */
  champion: Type.Optional(Type.Boolean()),
  /** Its 0-based place in the run's averaging ensemble, when it is a member. */
  ensemblePosition: Type.Optional(Count),
  /** Ensemble members: the largest architecture similarity to a member chosen before it (0 for the first). */
  ensembleSimilarity: Type.Optional(Type.Number()),
  /** The run's reference network: its final training gives the test score the champion is compared with (it may be the champion too). */
  reference: Type.Optional(Type.Boolean()),
});
export type ChampionCandidate = Static<typeof ChampionCandidateSchema>;

/** How a run's champion was chosen: a genome the user picked, the run file's rule, or the best of the search. */
export const ChampionChoiceSchema = Type.Union([
  Strict({ by: Type.Literal('pick'), genomeHash: Hash, evaluationId: Id, valAccuracy: Share }),
  Strict({ by: Type.Literal('rule'), rule: ChampionRuleSchema }),
  Strict({ by: Type.Literal('best'), note: Type.Optional(Text) }),
]);
export type ChampionChoice = Static<typeof ChampionChoiceSchema>;

/** One of the best `champion.topK` genomes by validation evidence, as the champion phase considered it. */
export const ConsideredGenomeSchema = Strict({
  genomeHash: Hash,
  /** Its best result at its largest budget (the source of its final training, were it chosen). */
  evaluationId: Id,
  /** Mean validation accuracy of its results at that budget. */
  valAccuracy: Share,
  results: Count,
  budgetEpochs: Count,
  params: Count,
});
export type ConsideredGenome = Static<typeof ConsideredGenomeSchema>;

/** One final training scored once on the test split. */
const Scored = {
  evaluationId: Id,
  sourceEvaluationId: Id,
  genomeHash: Hash,
  valAccuracy: Share,
  /** Regression runs: the fitness 1 / (1 + standardised test RMSE); `testRegression` holds the scores to show. */
  testAccuracy: Share,
  testLoss: Type.Number(),
  testRegression: Type.Optional(RegressionTestScoresSchema),
};

const RunControlled = Strict({ from: RunState, action: OneOf('pause', 'resume', 'stop', 'finish'), discardInFlight: Type.Optional(Type.Literal(true)) });

export const RUN_EVENT_SCHEMAS = {
  'run-created': Strict({ name: Text, dataset: Hash }),
  'run-resumed': Strict({ proposals: Count }),
  'run-paused': RunControlled,
  'run-searching': RunControlled,
  'run-stopped': RunControlled,
  'run-finish-requested': RunControlled,
  'dataset-warning': Strict({ code: Type.String({ pattern: '^[a-z-]{1,60}$' }), message: Text }),
  'reference-network': Strict({ genomeHash: Hash, description: Text, adjustments: Type.Array(Text) }),
  'reference-skipped': Strict({ description: Text, reason: Text }),
  'queue-rebuilt': Strict({ reason: Text, pending: Count, added: Count }),
  /** A finished job the coordinator would not record (naming no evaluation of this store, or a result that breaks the rules). */
  'rejected-result': Strict({ evaluationId: Id, reason: Text }),
  'reissued': Strict({ evaluationId: Id, next: Id, reason: Text }),
  'genome-failing': Strict({ evaluationId: Id, genomeHash: Hash, attempts: Count, reason: Text }),
  'worker-revoked': Strict({ workerId: Id, reason: Text }),
  'rejected-request': Strict({ method: Type.String({ maxLength: 16 }), url: Text, reason: Text }),
  'checkpoint-refused': Type.Union([
    Strict({ claimed: Hash, actual: Hash, bytes: Count, reason: Text }),
    Strict({ evaluationId: Id, sha256: Hash, reason: Text }),
  ]),
  'verification-queued': Strict({
    evaluationId: Id,
    verificationId: Id,
    opinion: Type.Union([Type.Literal(1), Type.Literal(2)]),
    purpose: Type.Union([Type.Literal('spot-check'), Type.Literal('champion-candidate')]),
    excludeWorkers: Type.Array(Id),
  }),
  'verification-retried': Strict({ verificationId: Id, reason: Text }),
  'verification-result-refused': Strict({ verificationId: Id, reason: Text }),
  'verification-ended': Strict({ verificationId: Id, evaluationId: Id, state: Type.Union([Type.Literal('failed'), Type.Literal('timed-out')]), reason: Type.Optional(Text) }),
  'verification-decision': Strict({
    evaluationId: Id,
    workerId: Id,
    verdict: OneOf('confirmed', 'rejected', 'disputed', 'unverified', 'ask-third-opinion'),
    reason: Text,
    credit: Type.Optional(Type.Array(Id)),
    blame: Type.Optional(Type.Array(Id)),
    opinions: Type.Optional(Type.Array(Strict({ workerId: Id, backend: BackendNameSchema, valAccuracy: Share, valLoss: Type.Number(), samplesSeen: Count }))),
  }),
  'worker-quarantined': Strict({ workerId: Id, reason: Text, reliability: Share }),
  'quarantined-results-dropped': Strict({ workerId: Id, droppedFromPopulation: Count }),
  'champion-picked': Strict({ genomeHash: Hash, evaluationId: Id, valAccuracy: Share }),
  /** A round of the champion phase begins: the genomes it trains again and how they were chosen. */
  'champion-candidates': Strict({
    candidates: Type.Array(ChampionCandidateSchema),
    choice: ChampionChoiceSchema,
    considered: Type.Optional(Type.Array(ConsideredGenomeSchema)),
    round: Count,
    ensemble: Type.Optional(EnsembleSettingsSchema),
  }),
  'champion-training-length': Strict({
    evaluationId: Id,
    genomeHash: Hash,
    sourceEvaluationId: Id,
    epochs: Type.Integer({ minimum: 1 }),
    rule: OneOf('run-file', 'learning-curve', 'genome-epochs', 'still-rising', 'within-noise'),
    detail: Text,
    /** Where its weights start (`champion.warmStart`): the search training's final weights after that many epochs, or a fresh initialisation. Absent in records older than it. */
    startsFrom: Type.Optional(Type.Union([Strict({ kind: Type.Literal('search-weights'), epochs: Type.Integer({ minimum: 1 }) }), Strict({ kind: Type.Literal('fresh') })])),
  }),
  /** A final training scored once on the test split. `backend`, `latencyMsPerSample`, `champion` and `round` are absent in records older than them. */
  'champion-candidate-scored': Strict({
    ...Scored,
    /** The coordinator's TensorFlow.js backend that scored it. */
    backend: Type.Optional(Type.String({ maxLength: 40 })),
    latencyMsPerSample: Type.Optional(Type.Number({ minimum: 0 })),
    /** Candidates that compete to be the champion: the exported ONNX graph's CPU latency in ONNX Runtime on the coordinator's machine, or why it was not measured. */
    onnxLatency: Type.Optional(
      Type.Union([
        Strict({ runtime: Type.String({ maxLength: 80 }), runs: Count, msPerSample: Type.Number({ minimum: 0 }), msPerBatch32: Type.Number({ minimum: 0 }) }),
        Strict({ unavailable: Text }),
      ]),
    ),
    champion: Type.Optional(Type.Boolean()),
    round: Type.Optional(Count),
    ensemblePosition: Type.Optional(Count),
  }),
  'reference-scored': Strict({ ...Scored, champion: Type.Boolean(), round: Count }),
  /**
   * The held-back check (`champion.selectionShare`): the search's champion and the reference network
   * after equal final trainings, scored on validation samples neither trained on; `exported` says
   * whose model became the run's champion.
   */
  'champion-held-back-check': Strict({
    heldBack: Count,
    champion: Strict({ evaluationId: Id, genomeHash: Hash, valAccuracy: Type.Union([Share, Type.Null()]) }),
    reference: Strict({ evaluationId: Id, genomeHash: Hash, valAccuracy: Type.Union([Share, Type.Null()]) }),
    exported: OneOf('search', 'reference'),
    /** The champion round that trained them (0: the run's own end). */
    round: Count,
  }),
  'ensemble-skipped': Strict({ reason: Text }),
  /** The averaging ensemble scored once on the test split. `round`, `size`, `diversityPenalty` and the members' `similarity` are absent in records older than them. */
  'ensemble-scored': Strict({
    testAccuracy: Share,
    testRegression: Type.Optional(RegressionTestScoresSchema),
    backend: Type.String({ maxLength: 40 }),
    averaging: Text,
    /** The champion round that trained it (0: the run's own end). */
    round: Type.Optional(Count),
    size: Type.Optional(Count),
    diversityPenalty: Type.Optional(Type.Number()),
    /** `similarity`: the largest architecture similarity to a member chosen before it (0 for the first). */
    members: Type.Array(Strict({ position: Count, genomeHash: Hash, evaluationId: Id, testAccuracy: Share, similarity: Type.Optional(Type.Union([Type.Number(), Type.Null()])) })),
  }),
  'champion-exported': Strict({ dir: Text, testAccuracy: Share }),
} satisfies Record<string, TSchema>;

export type RunEventKind = keyof typeof RUN_EVENT_SCHEMAS;
export type RunEventDetail<K extends RunEventKind> = Static<(typeof RUN_EVENT_SCHEMAS)[K]>;
export const RUN_EVENT_KINDS = Object.keys(RUN_EVENT_SCHEMAS) as RunEventKind[];

const validators = new Map<string, Validator<(typeof RUN_EVENT_SCHEMAS)[RunEventKind]>>();

/** The compiled check of one kind's detail (compiled on first use). */
export function runEventValidator<K extends RunEventKind>(kind: K): Validator<(typeof RUN_EVENT_SCHEMAS)[K]> {
  const schema = RUN_EVENT_SCHEMAS[kind];
  if (!schema) throw new InternalError(`no event kind '${String(kind)}'; add its schema to RUN_EVENT_SCHEMAS in shared-types/src/messages/run-events.ts`);
  let v = validators.get(kind);
  if (!v) validators.set(kind, (v = createValidator(`'${kind}' event`, schema)));
  return v as Validator<(typeof RUN_EVENT_SCHEMAS)[K]>;
}
