import { Type, type Static } from '@sinclair/typebox';

// The schema of a run file's `dataset`: where a run's data comes from, one schema per source kind.
/** The invented demo data: 16×16 grayscale glaze-line tile crops in four classes, made from a seed. */
export const DemoTilesSourceSchema = Type.Object(
  {
    kind: Type.Literal('demo-tiles'),
    samplesPerClass: Type.Integer({ minimum: 10, maximum: 20_000, default: 300 }),
    seed: Type.Integer({ minimum: 0, maximum: 4294967295, default: 7 }),
  },
  { additionalProperties: false },
);

/** Cell texts that mean "no value" in a CSV table, unless the run file lists its own. */
export const DEFAULT_MISSING_VALUE_TOKENS = ['', 'NA', 'N/A', 'NaN', 'nan', 'null', 'NULL', '?'] as const;

/** Distinct numbers a label column may hold before a run file without `task` is asked to say which task it means. */
export const MAX_AUTO_NUMERIC_CLASSES = 20;

/**
 * A CSV table with a header row: one sample per row, one column holds the class label, the other
 * columns are features. Paths in a run file are relative to the run file's folder.
 *
 * Column kinds: with `categoricalColumns: "auto"` (the default) a feature column is numeric when
 * every non-missing cell in it is a number, and categorical when at most 95% of them are numbers;
 * a column with more than 95% numbers and a few other cells is refused as a numeric column with a
 * typo (the error names the line), unless the run file lists it in `categoricalColumns`. With an
 * explicit list, the listed columns are categorical and every other feature column must be numeric.
 *
 * Encoding, fitted on the training split only: numeric columns are standardised with the training
 * mean and standard deviation (a constant column is only centred); categorical columns become one
 * one-hot block over the categories seen in training, in sorted order. A category that appears only
 * in validation or test encodes as all zeros.
 */
export const CsvSourceSchema = Type.Object(
  {
    kind: Type.Literal('csv'),
    /** The CSV file; relative paths are relative to the run file's folder. */
    path: Type.String({ minLength: 1 }),
    /** Header name of the column that holds the class of each row. */
    labelColumn: Type.String({ minLength: 1 }),
    /** Field separator, one character. @default "," */
    delimiter: Type.String({ minLength: 1, maxLength: 1, default: ',' }),
    /** `"auto"` (see above) or the exact list of categorical feature columns. @default "auto" */
    categoricalColumns: Type.Union([Type.Literal('auto'), Type.Array(Type.String({ minLength: 1 }), { maxItems: 10_000 })], { default: 'auto' }),
    /** Columns left out of the features (an id, a timestamp). @default [] */
    ignoreColumns: Type.Array(Type.String({ minLength: 1 }), { maxItems: 10_000, default: [] }),
    /** Cell texts (after trimming spaces) that mean a missing value. @default DEFAULT_MISSING_VALUE_TOKENS */
    missingValues: Type.Array(Type.String({ maxLength: 50 }), { maxItems: 100, default: [...DEFAULT_MISSING_VALUE_TOKENS] }),
    /**
     * What a missing feature value becomes. `fill`: a numeric cell takes the training mean (0 after
     * standardisation), a categorical cell encodes as all zeros. `drop-row`: rows with any missing
     * feature are left out before the split (the count is logged). `error`: the import is refused,
     * naming the first such line. A missing label is always an error. @default "fill"
     */
    missing: Type.Union([Type.Literal('fill'), Type.Literal('drop-row'), Type.Literal('error')], { default: 'fill' }),
    /** Standardise numeric columns with the training split's mean and standard deviation. @default true */
    standardize: Type.Boolean({ default: true }),
    /**
     * What the label column holds: `classification`, one class per distinct value; `regression`, a
     * number to predict (the head is one linear unit trained on mean squared error; the target is
     * standardised with the training split's mean and standard deviation and the splits are
     * stratified by target quantile bins). A missing target follows `missing` (`drop-row` or
     * `error`; a target is never filled). When absent, a numeric label column with more than
     * {@link MAX_AUTO_NUMERIC_CLASSES} distinct values is refused, suggesting `"regression"`.
     */
    task: Type.Optional(Type.Union([Type.Literal('classification'), Type.Literal('regression')])),
    /**
     * Regression only: what training minimises on the standardised target. `mean-squared-error`;
     * `huber`, squared below one standard deviation of the target and linear above it, so a few
     * outlying rows pull less. Scores are RMSE, MAE and R² either way. @default "mean-squared-error"
     */
    regressionLoss: Type.Optional(Type.Union([Type.Literal('mean-squared-error'), Type.Literal('huber')])),
  },
  { additionalProperties: false },
);
export type CsvSource = Static<typeof CsvSourceSchema>;

/** Side lengths in pixels that every image is resized to. */
export const ImageSizeSchema = Type.Object(
  {
    width: Type.Integer({ minimum: 1, maximum: 1024 }),
    height: Type.Integer({ minimum: 1, maximum: 1024 }),
  },
  { additionalProperties: false },
);

/**
 * A folder of labelled images: one sub-folder per class (its name is the class name), PNG or JPEG
 * files inside (`.png`, `.jpg`, `.jpeg`, any case). Other files and hidden files are skipped (and
 * counted in a warning). Pixels are scaled to [0, 1]; an alpha channel is ignored.
 */
export const ImageFolderSourceSchema = Type.Object(
  {
    kind: Type.Literal('image-folder'),
    /** The folder holding one sub-folder per class; relative to the run file's folder. */
    path: Type.String({ minLength: 1 }),
    /**
     * Resize every image to this size. When absent every image must already have the size of the
     * first one; a different size is refused, naming the file.
     */
    imageSize: Type.Optional(ImageSizeSchema),
    /** `area` averages the source pixels each target pixel covers (best for shrinking); `bilinear` interpolates. @default "area" */
    resize: Type.Union([Type.Literal('area'), Type.Literal('bilinear')], { default: 'area' }),
    /** 1: grayscale (luma, ITU-R BT.601 weights); 3: RGB. @default 1 */
    channels: Type.Union([Type.Literal(1), Type.Literal(3)], { default: 1 }),
  },
  { additionalProperties: false },
);
export type ImageFolderSource = Static<typeof ImageFolderSourceSchema>;

/**
 * A pair of IDX files (the open format of the MNIST distribution): one of samples (magic
 * 0x0000 08|09|0B|0C|0D|0E 01..04, big-endian sizes) and one of integer labels, with the same count.
 * Files ending in `.gz` are unpacked. Sample arrays of 2 dimensions after the count become
 * [height, width, 1] images, of 1 dimension flat feature vectors, of 3 dimensions images with channels.
 */
export const IdxSourceSchema = Type.Object(
  {
    kind: Type.Literal('idx'),
    /** IDX file of the samples (MNIST: `train-images-idx3-ubyte`); relative to the run file's folder. */
    images: Type.String({ minLength: 1 }),
    /** IDX file of the labels, one integer per sample; relative to the run file's folder. */
    labels: Type.String({ minLength: 1 }),
    /** Names of the classes by label value (label v is classNames[v]). When absent, the distinct label values, ascending. */
    classNames: Type.Optional(Type.Array(Type.String({ minLength: 1, maxLength: 200 }), { minItems: 2, maxItems: 10_000 })),
    /** Divide unsigned-byte samples by 255 so they lie in [0, 1]; other types are kept as they are. @default true */
    scaleBytes: Type.Boolean({ default: true }),
  },
  { additionalProperties: false },
);
export type IdxSource = Static<typeof IdxSourceSchema>;

/**
 * Windows cut from one long series: a CSV with a header row whose rows are time steps in time
 * order (one row per step, oldest first). Each sample is `window` consecutive steps of the
 * `channels` columns, shape [window, channels.length]; windows start every `stride` steps. The
 * target is `labelColumn` read at the window's last step (classification) or, with
 * `task: "regression"`, its number `horizon` steps after the window's last step.
 *
 * Splits are made by time, never by random windows: the last `split.test` share of the steps is
 * the test part, the `split.validation` share before it the validation part, the rest trains. A
 * window (with its target step) never straddles a part's boundary; such windows are left out.
 * Channels are standardised with the training part's mean and standard deviation. Every channel
 * cell must be a number (no missing values).
 */
export const SeriesWindowsSourceSchema = Type.Object(
  {
    kind: Type.Literal('series-windows'),
    /** The CSV file of time steps; relative to the run file's folder. */
    path: Type.String({ minLength: 1 }),
    /** Field separator, one character. @default "," */
    delimiter: Type.String({ minLength: 1, maxLength: 1, default: ',' }),
    /** Header names of the numeric input columns, in the order of the sample's channel axis. */
    channels: Type.Array(Type.String({ minLength: 1 }), { minItems: 1, maxItems: 1000, uniqueItems: true }),
    /** Time steps per window (the sample's first axis). */
    window: Type.Integer({ minimum: 2, maximum: 100_000 }),
    /** Steps between the starts of consecutive windows. @default 1 */
    stride: Type.Integer({ minimum: 1, maximum: 100_000, default: 1 }),
    /** The target column: a class per step (classification) or a number (regression; it may also be a channel). */
    labelColumn: Type.String({ minLength: 1 }),
    /** `classification` (also when absent): the class at the window's last step; `regression`: the number `horizon` steps ahead. */
    task: Type.Optional(Type.Union([Type.Literal('classification'), Type.Literal('regression')])),
    /** Regression only: steps between the window's last step and the step whose number is predicted (1: the next step). @default 1 */
    horizon: Type.Integer({ minimum: 1, maximum: 100_000, default: 1 }),
    /** Regression only: as for a CSV table. @default "mean-squared-error" */
    regressionLoss: Type.Optional(Type.Union([Type.Literal('mean-squared-error'), Type.Literal('huber')])),
  },
  { additionalProperties: false },
);
export type SeriesWindowsSource = Static<typeof SeriesWindowsSourceSchema>;

/**
 * Labelled sequences in one long-format CSV: one row per time step of one sample; `idColumn` says
 * which sample, `timeColumn` (a number) orders its steps, `channels` are the numeric inputs and
 * `labelColumn` its class (the same on every row of a sample). Each sample becomes shape
 * [length, channels.length]: a longer one keeps its first `length` steps, a shorter one is padded
 * at the end with the training mean (0 after standardisation). The split is stratified by class
 * over samples, so all steps of a sample stay in one split.
 */
export const SequencesSourceSchema = Type.Object(
  {
    kind: Type.Literal('sequences'),
    /** The long-format CSV; relative to the run file's folder. */
    path: Type.String({ minLength: 1 }),
    /** Field separator, one character. @default "," */
    delimiter: Type.String({ minLength: 1, maxLength: 1, default: ',' }),
    /** Column naming the sample each row belongs to. */
    idColumn: Type.String({ minLength: 1 }),
    /** Numeric column ordering a sample's steps (rows may come in any order). */
    timeColumn: Type.String({ minLength: 1 }),
    /** Header names of the numeric input columns, in the order of the sample's channel axis. */
    channels: Type.Array(Type.String({ minLength: 1 }), { minItems: 1, maxItems: 1000, uniqueItems: true }),
    /** Column holding each sample's class. */
    labelColumn: Type.String({ minLength: 1 }),
    /** Steps every sample is padded or cut to. Absent: the longest sample of the training split (a warning names how many samples were cut). */
    length: Type.Optional(Type.Integer({ minimum: 1, maximum: 100_000 })),
  },
  { additionalProperties: false },
);
export type SequencesSource = Static<typeof SequencesSourceSchema>;

/** Where a run's data comes from: the invented demo, or the user's own files. */
export const DatasetSourceSchema = Type.Union([DemoTilesSourceSchema, CsvSourceSchema, ImageFolderSourceSchema, IdxSourceSchema, SeriesWindowsSourceSchema, SequencesSourceSchema]);
/** Each dataset source kind with its schema, to check a run file's dataset against the kind it names. */
export const DATASET_SOURCE_SCHEMAS = {
  'demo-tiles': DemoTilesSourceSchema,
  csv: CsvSourceSchema,
  'image-folder': ImageFolderSourceSchema,
  idx: IdxSourceSchema,
  'series-windows': SeriesWindowsSourceSchema,
  sequences: SequencesSourceSchema,
} as const;
export type DatasetSource = Static<typeof DatasetSourceSchema>;
