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

/**
 * The search algorithms a run may name: `aging-evolution` (regularized evolution), `random` (the
 * baseline), `asha` (asynchronous successive halving over the epoch budget, random configurations),
 * `asha-evolution` (the same, new configurations are children of aging evolution) and
 * `pareto-evolution` (evolution selecting by non-dominated rank and crowding distance, accuracy
 * against `objective`).
 */
export const SearchAlgorithmNameSchema = Type.Union([
  Type.Literal('aging-evolution'),
  Type.Literal('random'),
  Type.Literal('asha'),
  Type.Literal('asha-evolution'),
  Type.Literal('pareto-evolution'),
]);
export type SearchAlgorithmName = Static<typeof SearchAlgorithmNameSchema>;

/** The champion must be the best validation accuracy under these limits (each optional). */
export const ChampionRuleSchema = Type.Object(
  {
    maxParams: Type.Optional(Type.Integer({ minimum: 1 })),
    maxFlops: Type.Optional(Type.Integer({ minimum: 1 })),
    maxLatencyMs: Type.Optional(Type.Number({ exclusiveMinimum: 0 })),
  },
  { additionalProperties: false, minProperties: 1 },
);
export type ChampionRule = Static<typeof ChampionRuleSchema>;

/**
 * An averaging ensemble chosen greedily: the most accurate genome first, then each time the one
 * with the highest validation accuracy minus `diversityPenalty` times its largest architecture
 * similarity (0 to 1) to a member already chosen.
 */
export const EnsembleSettingsSchema = Type.Object(
  {
    /** Members, each retrained like a champion candidate. */
    size: Type.Integer({ minimum: 2, maximum: 10 }),
    /** Accuracy given up per unit of similarity to the nearest chosen member. @default 0.05 */
    diversityPenalty: Type.Number({ minimum: 0, maximum: 1, default: 0.05 }),
  },
  { additionalProperties: false },
);
export type EnsembleSettings = Static<typeof EnsembleSettingsSchema>;

/** A run file: what to search, on what data, for how long. Every field has a default. */
export const RunConfigSchema = Type.Object(
  {
    name: Type.String({ minLength: 1, maxLength: 120, default: 'run' }),
    /** Seeds the search, the data split and every evaluation. */
    seed: Type.Integer({ minimum: 0, maximum: 4294967295, default: 1 }),
    dataset: DatasetSourceSchema,
    /**
     * Largest training shard (train + validation, as float32) the run may send to workers, in MiB.
     * Workers decode the whole shard in memory, so it must also fit under each worker's
     * `--memory-cap`; a larger dataset is refused before anything is stored. @default 1024
     */
    maxDatasetMb: Type.Integer({ minimum: 1, maximum: 1_048_576, default: 1024 }),
    /** Fractions of the data held out for validation and test; the rest trains. */
    split: Type.Object(
      {
        validation: Type.Number({ minimum: 0.05, maximum: 0.5, default: 0.15 }),
        test: Type.Number({ minimum: 0.05, maximum: 0.5, default: 0.15 }),
        /**
         * Seeds the split alone, so runs with different search seeds can share one fixed split
         * (a comparison of methods over seeds). When absent, the run's `seed` seeds the split too.
         */
        seed: Type.Optional(Type.Integer({ minimum: 0, maximum: 4294967295 })),
      },
      { additionalProperties: false, default: {} },
    ),
    search: Type.Object(
      {
        /**
         * @default "asha-evolution": the search benchmark's best method on real MNIST over five
         * seeds (coordinator/bench/RESULTS-search.md), ahead of aging evolution and random search.
         */
        algorithm: Type.Union([SearchAlgorithmNameSchema], { default: 'asha-evolution' }),
        /** Living genomes the parents are drawn from (P). @default 8, as measured by the search benchmark */
        populationSize: Type.Integer({ minimum: 2, maximum: 10_000, default: 8 }),
        /** Members drawn per tournament (S). @default 3, as measured by the search benchmark */
        sampleSize: Type.Integer({ minimum: 1, maximum: 10_000, default: 3 }),
        /**
         * Reduction factor of `asha` and `asha-evolution`: each rung trains eta times longer than the
         * one below, and the top 1/eta of a rung is promoted to the next. @default 3
         */
        eta: Type.Integer({ minimum: 2, maximum: 100, default: 3 }),
        /**
         * Training epochs of the lowest rung of `asha` and `asha-evolution` (every new configuration
         * starts there). Absent: from the training split's size, so that the lowest rung trains on at
         * least 1,800 samples (1 epoch of 1,800 or more training samples, 3 epochs of 600); the run
         * records the number it used.
         */
        minEpochs: Type.Optional(Type.Integer({ minimum: 1, maximum: 1000 })),
        /**
         * Training epochs of the top rung of `asha` and `asha-evolution`; the rungs are minEpochs·eta^k
         * below it. Must be at least minEpochs. Absent: 9 × minEpochs (at most 1000).
         */
        maxEpochs: Type.Optional(Type.Integer({ minimum: 1, maximum: 1000 })),
        /**
         * What `pareto-evolution` minimises against validation accuracy: parameter count, FLOPs per
         * sample, or `latency`, the milliseconds one sample takes alone on the worker's CPU as the
         * worker measured it after training (noisier: it depends on the PC). @default "params"
         */
        objective: Type.Union([Type.Literal('params'), Type.Literal('flops'), Type.Literal('latency')], { default: 'params' }),
        /**
         * Where fresh genomes (initial members, random-search samples, new ASHA configurations) come
         * from: `family`, networks of the hand-made kind around the reference network of the data
         * kind (convolution blocks with batch norm and pooling for images, dense layers with dropout
         * for tables; varied depth, width and recipe); `minimal`, the linear classifier that
         * mutations must grow; `mixed`, either with even odds. @default "family"
         */
        start: Type.Union([Type.Literal('family'), Type.Literal('minimal'), Type.Literal('mixed')], { default: 'family' }),
        /**
         * Weight inheritance: a candidate promoted by `asha`/`asha-evolution` continues from its own
         * checkpoint of the lower rung, and a child of evolution starts from its parent's final
         * weights where layer names and shapes match (the rest is freshly initialised). Every search
         * training then uploads its final checkpoint. @default true (every method of the search
         * benchmark ran with it)
         */
        weightInheritance: Type.Boolean({ default: true }),
        /**
         * Train the reference network (the one a careful practitioner writes by hand for this data
         * kind; docs/reference-networks.md) as the run's first evaluation. It joins the population
         * like any result, gets the champion's final training too, and the report says whether the
         * search beat it. A reference that cannot fit the search space is scaled down or skipped
         * (an event says which). Runs stored before this setting have none. @default true
         */
        reference: Type.Boolean({ default: true }),
        /**
         * `asha` and `asha-evolution`: the reference network moves up every rung whatever its rank,
         * so the champion's choice always has it trained for the top rung's budget (at the cost of
         * that training). Off by default: on the MNIST benchmark it did not change the champions'
         * test error beyond the spread between seeds (docs/search-benchmark.md). @default false
         */
        promoteReference: Type.Boolean({ default: false }),
        /**
         * `asha-evolution`: how its tournaments rank the members parents are drawn from.
         * `first-rung`: by their result at the lowest rung (one short training each);
         * `highest-rung`: by the highest rung each member's genome has reached, then its fitness
         * there, so a genome that kept its rank over longer trainings beats one that only learns
         * fast. @default 'first-rung' (on the search benchmark `highest-rung` changed nothing beyond
         * the spread between runs: with one or two genomes above rung 1 per run it rarely changes a
         * parent; docs/search-benchmark.md)
         */
        parents: Type.Union([Type.Literal('first-rung'), Type.Literal('highest-rung')], { default: 'first-rung' }),
      },
      { additionalProperties: false, default: {} },
    ),
    budget: Type.Object(
      {
        /** Stop proposing after this many recorded search evaluations. */
        maxEvaluations: Type.Integer({ minimum: 1, maximum: 10_000_000, default: 200 }),
        /** Stop proposing after this many minutes of run time. */
        maxMinutes: Type.Number({ exclusiveMinimum: 0, maximum: 525_600, default: 60 }),
        /**
         * Training samples the search may spend (a unit of work, not of time: a busy PC makes the
         * run slower, not cheaper). Each result counts the samples it trained in its own job (a
         * training that continued a checkpoint counts only what it added). Once the recorded
         * results reach it the run finishes, giving up what is still queued or training; a result
         * that arrives past it is not recorded. Absent: no such limit.
         */
        maxSamples: Type.Optional(Type.Integer({ minimum: 1 })),
      },
      { additionalProperties: false, default: {} },
    ),
    evaluation: Type.Object(
      {
        /** Wall-clock cap on one search training. */
        maxSeconds: Type.Number({ exclusiveMinimum: 0, maximum: 86_400, default: 120 }),
        /** Evaluations that fail this many times are given up (the genome is marked failing). */
        maxAttempts: Type.Integer({ minimum: 1, maximum: 20, default: 3 }),
        /**
         * A search training uploads a checkpoint (weights, optimizer state, epoch, random state) every
         * this many epochs, so a reissued attempt resumes instead of starting over; 0 = never. @default 1
         */
        checkpointEveryEpochs: Type.Integer({ minimum: 0, maximum: 1000, default: 1 }),
        /** Largest checkpoint the coordinator accepts, in MiB; a larger one is not uploaded (the attempt just cannot resume). @default 64 */
        checkpointMaxMb: Type.Integer({ minimum: 1, maximum: 1024, default: 64 }),
      },
      { additionalProperties: false, default: {} },
    ),
    champion: Type.Object(
      {
        /**
         * Epochs of the final training on train + validation. Absent: each genome's own learning
         * curve sets it (the epoch of its best validation accuracy in its longest search training,
         * at least 1); the report and a `champion-training-length` event say which rule set it.
         */
        epochs: Type.Optional(Type.Integer({ minimum: 1, maximum: 1000 })),
        maxSeconds: Type.Number({ exclusiveMinimum: 0, maximum: 86_400, default: 600 }),
        /**
         * Most training samples one final training may see (a budget for the champion phase, so a
         * comparison at equal CPU can count it). A genome whose learning curve was still rising
         * when its search training ended takes this whole budget; absent, no cap and no such
         * extension.
         */
        maxSamples: Type.Optional(Type.Integer({ minimum: 1 })),
        /**
         * Share of the validation split held back from the final trainings of the champion and the
         * run's reference network, so the two can be compared after equal final trainings on data
         * neither trained on: the one with the higher accuracy there is exported (a tie keeps the
         * search's champion). It guards against a network that looked best in short search
         * trainings and falls behind in a long one. At most 5,000 samples are held back; 0 turns
         * the check off (both then train on all of train + validation). @default 0.5
         */
        selectionShare: Type.Optional(Type.Number({ minimum: 0, maximum: 0.9, default: 0.5 })),
        /**
         * Whether a final training starts from the weights its genome's search training ended with
         * (copied layer by layer, a fresh optimizer, the whole final length from epoch 0) instead of
         * a fresh initialisation: the search's samples spent on that network are not thrown away.
         * The reference network and ensemble members start the same way. Needs the search's final
         * checkpoints (`search.weightInheritance`); a genome without one starts fresh, and the
         * `champion-training-length` event says which it was. @default true
         */
        warmStart: Type.Optional(Type.Boolean({ default: true })),
        /**
         * How many of the best distinct genomes by validation evidence the champion phase considers:
         * their search results are verified on another worker first (see `verification`), the
         * report lists them, and the best of them that still counts is the champion. Only the
         * champion gets the final training and the one score on the held-out test split.
         */
        topK: Type.Integer({ minimum: 1, maximum: 20, default: 3 }),
        /**
         * Limits the champion must meet: only search results under every limit given compete (the
         * best `topK` of them by validation accuracy get the final training). `maxLatencyMs` is the
         * worker-measured milliseconds per sample alone. A pick (`netbreeder pick`) overrides it.
         */
        rule: Type.Optional(ChampionRuleSchema),
        /** Also export an averaging ensemble of accurate, diverse genomes (see `ensemble.size`). */
        ensemble: Type.Optional(EnsembleSettingsSchema),
      },
      { additionalProperties: false, default: {} },
    ),
    /**
     * Replicated verification (see coordinator/src/trust/): results re-run on another worker with
     * the same genome, seed and budget, and compared within a tolerance that depends on the two
     * backends. Hosts whose results keep failing it are quarantined.
     */
    verification: Type.Object(
      {
        /** Fraction of all search results re-run as a spot check, drawn with the run's seed. @default 0.05 */
        spotCheckFraction: Type.Number({ minimum: 0, maximum: 1, default: 0.05 }),
        /** Re-run each champion candidate's result on another worker before its final training. @default true */
        championCandidates: Type.Boolean({ default: true }),
        /**
         * Seconds a verification may wait for another worker and train; after that its result counts
         * as "unverified" (a run with one worker never hangs on it). @default 600
         */
        timeoutSeconds: Type.Number({ exclusiveMinimum: 0, maximum: 86_400, default: 600 }),
        /** A worker is quarantined once this many of its results failed verification (and its reliability is below the next setting). @default 2 */
        quarantineAfterFailures: Type.Integer({ minimum: 1, maximum: 1000, default: 2 }),
        /** ... and its reliability score, (agreed + 1) / (agreed + failed + 1), is below this. @default 0.5 */
        quarantineBelowReliability: Type.Number({ minimum: 0, maximum: 1, default: 0.5 }),
      },
      { additionalProperties: false, default: {} },
    ),
    searchSpace: Type.Optional(SearchSpaceSchema),
  },
  { additionalProperties: false },
);
export type RunConfig = Static<typeof RunConfigSchema>;
