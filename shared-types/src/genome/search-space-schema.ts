import { Type, type Static } from '@sinclair/typebox';
import { ActivationSchema, LAYER_KINDS, SCHEDULE_KINDS, MAX_REPEAT_TIMES, OptimizerSchema, type LayerKind } from './genome-schema.js';

const Range = (min: number, max: number, opts: { integer?: boolean } = {}) => {
  const n = opts.integer ? Type.Integer({ minimum: min, maximum: max }) : Type.Number({ minimum: min, maximum: max });
  return Type.Object({ min: n, max: n }, { additionalProperties: false });
};

/**
 * The rules every genome of a run must obey. Caps on parameters and FLOPs keep any candidate from
 * exhausting an office PC; they are checked before a genome is queued.
 */
export const SearchSpaceSchema = Type.Object(
  {
    allowedKinds: Type.Array(Type.Union(LAYER_KINDS.map((k) => Type.Literal(k))), { minItems: 1, uniqueItems: true }),
    /** Most layer nodes a genome may have (the implicit head not counted). A repeat node counts as
     * the layers it builds: its motif's nodes once per application (see `expandedLayerCount`). */
    maxNodes: Type.Integer({ minimum: 0, maximum: 256 }),
    /** Most trainable and non-trainable parameters, head included. */
    maxParams: Type.Integer({ minimum: 1 }),
    /** Most forward-pass FLOPs per sample (2 per multiply-add), head included. */
    maxFlops: Type.Integer({ minimum: 1 }),
    units: Range(1, 65536, { integer: true }),
    filters: Range(1, 4096, { integer: true }),
    kernelSizes: Type.Array(Type.Integer({ minimum: 1, maximum: 11 }), { minItems: 1, uniqueItems: true }),
    strides: Type.Array(Type.Integer({ minimum: 1, maximum: 4 }), { minItems: 1, uniqueItems: true }),
    /** Dilations a conv1d may have (absent: 1 only). */
    dilations: Type.Optional(Type.Array(Type.Integer({ minimum: 1, maximum: 8 }), { minItems: 1, uniqueItems: true })),
    poolSizes: Type.Array(Type.Integer({ minimum: 2, maximum: 4 }), { minItems: 1, uniqueItems: true }),
    dropoutRate: Range(0, 0.9),
    activations: Type.Array(ActivationSchema, { minItems: 1, uniqueItems: true }),
    optimizers: Type.Array(OptimizerSchema, { minItems: 1, uniqueItems: true }),
    learningRate: Range(1e-6, 1),
    batchSizes: Type.Array(Type.Integer({ minimum: 1, maximum: 4096 }), { minItems: 1, uniqueItems: true }),
    weightDecay: Range(0, 0.1),
    epochs: Range(1, 1000, { integer: true }),
    /** Most applications a `repeat` node may ask for. @default 4 ({@link DEFAULT_MAX_REPEATS}) */
    maxRepeats: Type.Optional(Type.Integer({ minimum: 1, maximum: MAX_REPEAT_TIMES })),
    /** Learning-rate schedules a genome may have (absent: only a constant rate, as before schedules existed). */
    schedules: Type.Optional(Type.Array(Type.Union(SCHEDULE_KINDS.map((k) => Type.Literal(k))), { minItems: 1, uniqueItems: true })),
    /** Range of the augmentation's shift in pixels, for image data (absent: no shift). */
    shift: Type.Optional(Range(0, 8, { integer: true })),
    /**
     * The run file's word that a left-right mirror keeps every image's label (a tile stays a tile;
     * a digit or a letter does not). Only then may a genome flip its training images; refused on
     * flat data, which has no width axis. @default false
     */
    flips: Type.Optional(Type.Boolean()),
    /** Range of label smoothing ε (absent: none). */
    labelSmoothing: Type.Optional(Range(0, 0.5)),
    /** Range of early stopping's patience in epochs; a genome may also have none (absent: no early stopping). */
    patience: Type.Optional(Range(1, 100, { integer: true })),
  },
  { additionalProperties: false },
);
export type SearchSpace = Static<typeof SearchSpaceSchema>;

/** `maxRepeats` of a space that does not set it. */
export const DEFAULT_MAX_REPEATS = 4;
/** The space's `maxRepeats`, or its default. */
export const maxRepeatsOf = (space: SearchSpace): number => space.maxRepeats ?? DEFAULT_MAX_REPEATS;

/** The space's conv1d dilations, or 1 only. */
export const dilationsOf = (space: SearchSpace): readonly number[] => space.dilations ?? [1];

/** Kinds that only make sense on an image (height × width × channels) tensor. */
export const IMAGE_KINDS: readonly LayerKind[] = ['conv2d', 'depthwise-conv2d', 'max-pool2d', 'avg-pool2d'];
/** Kinds that only make sense on a sequence (time steps × channels) tensor. */
export const SEQUENCE_KINDS: readonly LayerKind[] = ['conv1d', 'max-pool1d', 'avg-pool1d', 'lstm', 'gru'];
/** Kinds that need an image or a sequence: they leave it for flat features. */
export const UNFLATTENING_KINDS: readonly LayerKind[] = ['flatten', 'global-avg-pool', 'global-max-pool'];
/** Kinds that only make sense on an image or sequence tensor (never on flat samples). */
export const SPATIAL_KINDS: readonly LayerKind[] = [...IMAGE_KINDS, ...SEQUENCE_KINDS, ...UNFLATTENING_KINDS];

/**
 * A search space sized for an office PC: at most 250k parameters and 20 MFLOPs per sample.
 * `depthwise-conv2d` is left out by default; add it to `allowedKinds` to search over it. The
 * sequence kinds are left out too: {@link defaultSequenceSearchSpace} is the default for sequences.
 */
export function defaultSearchSpace(): SearchSpace {
  return {
    allowedKinds: LAYER_KINDS.filter((k) => k !== 'depthwise-conv2d' && !SEQUENCE_KINDS.includes(k)),
    maxNodes: 24,
    maxParams: 250_000,
    maxFlops: 20_000_000,
    units: { min: 8, max: 256 },
    filters: { min: 4, max: 64 },
    kernelSizes: [1, 3, 5],
    strides: [1, 2],
    poolSizes: [2],
    dropoutRate: { min: 0, max: 0.5 },
    activations: ['relu', 'elu', 'tanh', 'swish'],
    optimizers: ['adam', 'sgd', 'rmsprop'],
    learningRate: { min: 1e-4, max: 1e-2 },
    batchSizes: [16, 32, 64, 128],
    weightDecay: { min: 0, max: 1e-3 },
    epochs: { min: 1, max: 20 },
    maxRepeats: DEFAULT_MAX_REPEATS,
    schedules: ['constant', 'cosine', 'step'],
    shift: { min: 0, max: 2 },
    labelSmoothing: { min: 0, max: 0.1 },
    patience: { min: 2, max: 5 },
  };
}

/**
 * The default space for sequence data (time steps × channels): 1-D convolutions (kernels 3, 5, 7,
 * dilations 1, 2, 4), 1-D pools, LSTM and GRU layers of 8 to 128 units, and the kinds that are not
 * image-only; no image augmentation. Same caps as {@link defaultSearchSpace}.
 */
export function defaultSequenceSearchSpace(): SearchSpace {
  const { shift: _shift, ...base } = defaultSearchSpace();
  return {
    ...base,
    allowedKinds: LAYER_KINDS.filter((k) => !IMAGE_KINDS.includes(k)),
    units: { min: 8, max: 128 },
    filters: { min: 8, max: 64 },
    kernelSizes: [3, 5, 7],
    dilations: [1, 2, 4],
  };
}

/** The default space for data of this sample shape: {@link defaultSequenceSearchSpace} for sequences, else {@link defaultSearchSpace}. */
export const defaultSearchSpaceFor = (inputShape: readonly number[]): SearchSpace =>
  inputShape.length === 2 ? defaultSequenceSearchSpace() : defaultSearchSpace();
