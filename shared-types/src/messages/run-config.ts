import { Type, type Static } from '@sinclair/typebox';
import { SearchSpaceSchema } from '../genome/search-space-schema.js';
import { DatasetSourceSchema } from './dataset-source.js';

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
