import { Type, type Static } from '@sinclair/typebox';
import { createValidator } from '../validation.js';
import { TargetScalingSchema } from './dataset-manifest.js';

/** The version of `preprocessing.json` this code writes and reads; a reader refuses any other. */
export const PREPROCESSING_FILE_VERSION = 1;

const Name = Type.String({ minLength: 1 });
const Count = Type.Integer({ minimum: 0 });

/** One numeric CSV column: `(value - mean) / std` (full float64 precision) goes to `offset` of the input vector. */
export const NumericColumnStepSchema = Type.Object(
  {
    name: Name,
    kind: Type.Literal('numeric'),
    offset: Count,
    /** Training-split mean; a missing cell becomes this value before scaling (so 0 when standardised). */
    mean: Type.Number(),
    /** Training-split population standard deviation; 1 when the column is constant or not standardised. */
    std: Type.Number({ exclusiveMinimum: 0 }),
  },
  { additionalProperties: false },
);

/** One categorical CSV column: a one-hot block of `categories.length` values starting at `offset`. */
export const CategoricalColumnStepSchema = Type.Object(
  {
    name: Name,
    kind: Type.Literal('categorical'),
    offset: Count,
    /** Categories seen in training, in one-hot order: category i sets value `offset + i` to 1. */
    categories: Type.Array(Type.String()),
    /** A category not in the list, or a missing cell: the whole block stays 0. */
    unseen: Type.Literal('all-zeros'),
  },
  { additionalProperties: false },
);

/** A CSV table: one row with the training header becomes `featureCount` values. */
export const TableStepsSchema = Type.Object(
  {
    kind: Type.Literal('table'),
    delimiter: Type.String({ minLength: 1, maxLength: 1 }),
    /** The training file's label column; not needed (and ignored) in new data. */
    labelColumn: Name,
    /** Feature columns in the order their values appear in the model's input. */
    columns: Type.Array(Type.Union([NumericColumnStepSchema, CategoricalColumnStepSchema]), { minItems: 1 }),
    featureCount: Type.Integer({ minimum: 1 }),
    /** False: numeric values go in as they are (mean and std are then still recorded, std 1). */
    standardized: Type.Boolean(),
    /** Cells equal (after trimming spaces) to one of `tokens` are missing. */
    missing: Type.Object(
      {
        tokens: Type.Array(Type.String()),
        numeric: Type.Literal('training-mean'),
        categorical: Type.Literal('all-zeros'),
        /** The run file's rule during training (`drop-row` left such rows out, `error` refused them); new data is filled as above. */
        trainingRule: Type.Union([Type.Literal('fill'), Type.Literal('drop-row'), Type.Literal('error')]),
      },
      { additionalProperties: false },
    ),
    /** Columns the training ignored; new data may hold them or any other extra column. */
    ignoredColumns: Type.Array(Type.String()),
  },
  { additionalProperties: false },
);

/** A PNG or JPEG image: decoded, alpha dropped, brought to width × height, scaled to [0, 1]. */
export const ImageStepsSchema = Type.Object(
  {
    kind: Type.Literal('images'),
    width: Type.Integer({ minimum: 1 }),
    height: Type.Integer({ minimum: 1 }),
    /** 1: luma 0.299 R + 0.587 G + 0.114 B (ITU-R BT.601); 3: R, G, B interleaved per pixel. */
    channels: Type.Union([Type.Literal(1), Type.Literal(3)]),
    /** `none`: images must already be width × height; `area` averages covered source pixels; `bilinear` interpolates (half-pixel centres). */
    resize: Type.Union([Type.Literal('area'), Type.Literal('bilinear'), Type.Literal('none')]),
    scale: Type.Literal('divide-255'),
    /** Values are laid out row by row, channels interleaved: shape [height, width, channels]. */
    layout: Type.Literal('height-width-channels'),
    /** Set for the generated demo tiles: their values were floats in [0, 1], so PNGs of them are rounded to bytes. */
    note: Type.Optional(Type.String()),
  },
  { additionalProperties: false },
);

/** An IDX sample file: each sample's values in file order, optionally bytes / 255. */
export const IdxStepsSchema = Type.Object(
  {
    kind: Type.Literal('idx'),
    /** IDX data type code of the samples (0x08 unsigned byte, …). */
    typeCode: Type.Integer({ minimum: 0 }),
    /** Sample shape (2-D samples get a trailing channel axis of 1). */
    sampleShape: Type.Array(Type.Integer({ minimum: 1 }), { minItems: 1 }),
    scale: Type.Union([Type.Literal('divide-255'), Type.Literal('none')]),
    /** Label value of each class, in class order (for reading label files of new data). */
    labelValues: Type.Array(Type.Integer()),
  },
  { additionalProperties: false },
);

/** One channel of a series: `(value - mean) / std` (training part's mean and population std). */
export const SeriesChannelStepSchema = Type.Object(
  { name: Name, mean: Type.Number(), std: Type.Number({ exclusiveMinimum: 0 }) },
  { additionalProperties: false },
);

/**
 * A CSV of time steps (rows in time order, header names the columns): every `window` consecutive
 * rows of the channel columns, each standardised, make one input of shape [window, channels].
 */
export const SeriesStepsSchema = Type.Object(
  {
    kind: Type.Literal('series-windows'),
    delimiter: Type.String({ minLength: 1, maxLength: 1 }),
    /** Channel columns in the order of the input's last axis. */
    channels: Type.Array(SeriesChannelStepSchema, { minItems: 1 }),
    window: Type.Integer({ minimum: 1 }),
    /** Values are laid out step by step, channels interleaved: shape [window, channels]. */
    layout: Type.Literal('time-channels'),
    /** The training file's target column and, for regression, how many steps after a window's last step it was read. */
    labelColumn: Name,
    horizon: Type.Optional(Type.Integer({ minimum: 1 })),
  },
  { additionalProperties: false },
);

/**
 * A long-format CSV of labelled sequences: rows grouped by `idColumn`, ordered by `timeColumn`;
 * each sample's channels standardised, cut to its first `length` steps or padded at the end with
 * 0 (the training mean), giving shape [length, channels].
 */
export const SequenceStepsSchema = Type.Object(
  {
    kind: Type.Literal('sequences'),
    delimiter: Type.String({ minLength: 1, maxLength: 1 }),
    idColumn: Name,
    timeColumn: Name,
    channels: Type.Array(SeriesChannelStepSchema, { minItems: 1 }),
    length: Type.Integer({ minimum: 1 }),
    pad: Type.Literal('end-with-training-mean'),
    truncate: Type.Literal('keep-first-steps'),
    layout: Type.Literal('time-channels'),
  },
  { additionalProperties: false },
);

/** `preprocessing.json` of an export: exactly how raw input becomes the model's input, and what its outputs mean. */
export const PreprocessingFileSchema = Type.Object(
  {
    format: Type.Literal('netbreeder-preprocessing'),
    version: Type.Literal(PREPROCESSING_FILE_VERSION),
    /** Shape of one model input, without the batch axis. */
    inputShape: Type.Array(Type.Integer({ minimum: 1 }), { minItems: 1 }),
    /** Class names in the order of the model's softmax outputs (a regression run: the target quantile bins its split was stratified by). */
    classNames: Type.Array(Type.String(), { minItems: 2 }),
    /** A regression model: its one output is the target standardised; the prediction in the target's units is `output × std + mean`. Absent for a classifier. */
    target: Type.Optional(TargetScalingSchema),
    steps: Type.Union([TableStepsSchema, ImageStepsSchema, IdxStepsSchema, SeriesStepsSchema, SequenceStepsSchema]),
  },
  { additionalProperties: false },
);
export type PreprocessingFile = Static<typeof PreprocessingFileSchema>;
export type TableSteps = Static<typeof TableStepsSchema>;
export type ImageSteps = Static<typeof ImageStepsSchema>;
export type IdxSteps = Static<typeof IdxStepsSchema>;
export type SeriesSteps = Static<typeof SeriesStepsSchema>;
export type SequenceSteps = Static<typeof SequenceStepsSchema>;

export const preprocessingFileValidator = createValidator('preprocessing file', PreprocessingFileSchema);
