import { Type, type Static } from '@sinclair/typebox';
import { TrainingStartSchema } from '../checkpoint/checkpoint-ref.js';

export const EVALUATION_RESULT_VERSION = 1;

export const BackendNameSchema = Type.Union([Type.Literal('tensorflow'), Type.Literal('wasm'), Type.Literal('cpu')]);
export type BackendName = Static<typeof BackendNameSchema>;

const Finite = (opts: { minimum?: number; maximum?: number } = {}) => Type.Number(opts);
const Fraction = Type.Number({ minimum: 0, maximum: 1 });

export const EpochRecordSchema = Type.Object(
  {
    epoch: Type.Integer({ minimum: 1 }),
    trainLoss: Finite({ minimum: 0 }),
    trainAccuracy: Fraction,
    valLoss: Type.Union([Finite({ minimum: 0 }), Type.Null()]),
    valAccuracy: Type.Union([Fraction, Type.Null()]),
    seconds: Finite({ minimum: 0 }),
  },
  { additionalProperties: false },
);
export type EpochRecord = Static<typeof EpochRecordSchema>;

/** A trained model in TensorFlow.js layers format, weights as one base64 buffer. */
export const ModelArtifactsSchema = Type.Object(
  {
    modelTopology: Type.Record(Type.String(), Type.Unknown()),
    weightSpecs: Type.Array(
      Type.Object({ name: Type.String(), shape: Type.Array(Type.Integer({ minimum: 0 })), dtype: Type.String() }, { additionalProperties: true }),
    ),
    /** At most 48 MiB of base64 (36 MiB of weights). */
    weightDataBase64: Type.String({ maxLength: 48 * 1024 * 1024 }),
  },
  { additionalProperties: false },
);
export type ModelArtifactsMessage = Static<typeof ModelArtifactsSchema>;

/**
 * A regression network's validation scores in the target's own units (RMSE and MAE multiplied back
 * by the target's training standard deviation; R² has no units). In a regression result
 * `valAccuracy` holds the search's fitness 1 / (1 + standardised RMSE), never shown as an accuracy.
 */
export const RegressionScoresSchema = Type.Object(
  {
    rmse: Finite({ minimum: 0 }),
    mae: Finite({ minimum: 0 }),
    r2: Type.Number(),
  },
  { additionalProperties: false },
);
export type RegressionScores = Static<typeof RegressionScoresSchema>;

/**
 * A regression champion's one score on the held-out test split, in the target's units, with the
 * RMSE of always predicting the training split's mean target beside it: the baseline any regressor
 * must beat.
 */
export const RegressionTestScoresSchema = Type.Object(
  {
    rmse: Finite({ minimum: 0 }),
    mae: Finite({ minimum: 0 }),
    r2: Type.Number(),
    baselineRmse: Finite({ minimum: 0 }),
  },
  { additionalProperties: false },
);
export type RegressionTestScores = Static<typeof RegressionTestScoresSchema>;

/**
 * What a worker returns for one evaluation (the BullMQ job's return value). Validation figures are
 * null only for champion trainings, whose validation split is part of their training data.
 */
export const EvaluationResultSchema = Type.Object(
  {
    schemaVersion: Type.Literal(EVALUATION_RESULT_VERSION),
    evaluationId: Type.String({ pattern: '^[A-Za-z0-9_-]{1,80}$' }),
    workerId: Type.String({ minLength: 1, maxLength: 128 }),
    backend: BackendNameSchema,
    valAccuracy: Type.Union([Fraction, Type.Null()]),
    valLoss: Type.Union([Finite({ minimum: 0 }), Type.Null()]),
    trainLoss: Finite({ minimum: 0 }),
    trainAccuracy: Fraction,
    paramCount: Type.Integer({ minimum: 0 }),
    flops: Type.Integer({ minimum: 0 }),
    epochsRun: Type.Integer({ minimum: 0 }),
    samplesSeen: Type.Integer({ minimum: 0 }),
    trainSeconds: Finite({ minimum: 0 }),
    samplesPerSecond: Finite({ minimum: 0 }),
    peakRssBytes: Type.Integer({ minimum: 0 }),
    /** Why training stopped: all epochs done, or a budget limit reached. */
    /** What ended training: its epochs, its wall-time cap, its sample cap, or early stopping (`patience` epochs without a lower validation loss). */
    stoppedBy: Type.Union([Type.Literal('epochs'), Type.Literal('seconds'), Type.Literal('samples'), Type.Literal('patience')]),
    /** The epoch of best validation accuracy (with a validation split), 1-based. */
    bestEpoch: Type.Optional(Type.Integer({ minimum: 1 })),
    history: Type.Array(EpochRecordSchema, { maxItems: 1000 }),
    /**
     * CPU time (user + system, all threads) the training process spent on this evaluation, in
     * seconds: measured with process.cpuUsage() in the training child, not wall time. Absent in
     * results of workers older than accounting.
     */
    cpuSeconds: Type.Optional(Finite({ minimum: 0 })),
    /** Median ms to classify one sample alone on the worker's CPU after training (absent from workers older than this field). */
    latencyMsPerSample: Type.Optional(Finite({ minimum: 0 })),
    model: Type.Optional(ModelArtifactsSchema),
    /** Regression runs only: validation RMSE, MAE and R² in the target's units (absent for champion trainings). */
    valRegression: Type.Optional(RegressionScoresSchema),
    /** How the training started (fresh, resumed from a checkpoint, inherited weights); absent in results of workers before checkpoints. */
    start: Type.Optional(TrainingStartSchema),
  },
  { additionalProperties: false },
);
export type EvaluationResult = Static<typeof EvaluationResultSchema>;
