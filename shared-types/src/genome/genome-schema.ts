import { Type, type Static } from '@sinclair/typebox';

/**
 * The genome: a small directed acyclic graph of layers plus training hyperparameters.
 *
 * Nodes name their inputs by id; the id `input` is the dataset's sample tensor. The node named by
 * `output` feeds the classifier head, which every genome has implicitly: a flatten when the output
 * is still spatial, then a dense layer with one softmax unit per class. Shapes are never stored in
 * a genome; they follow from the dataset's input shape (see `analyzeGenome`). A genome may define
 * blocks once (`motifs`) and apply them several times in sequence with `repeat` nodes.
 */
export const GENOME_SCHEMA_VERSION = 1;

/** The id by which nodes refer to the dataset's input tensor. */
export const INPUT_ID = 'input';

export const ActivationSchema = Type.Union([Type.Literal('relu'), Type.Literal('relu6'), Type.Literal('elu'), Type.Literal('selu'), Type.Literal('tanh'), Type.Literal('sigmoid'), Type.Literal('swish'), Type.Literal('linear')]);
export type Activation = Static<typeof ActivationSchema>;

const NodeId = Type.String({ pattern: '^[A-Za-z][A-Za-z0-9_-]{0,31}$' });
const Inputs = (min: number, max: number) => Type.Array(Type.String({ minLength: 1, maxLength: 32 }), { minItems: min, maxItems: max });
const Padding = Type.Union([Type.Literal('same'), Type.Literal('valid')]);
const KernelSize = Type.Integer({ minimum: 1, maximum: 11 });
const Stride = Type.Integer({ minimum: 1, maximum: 4 });

const node = <K extends string, P extends Record<string, import('@sinclair/typebox').TSchema>>(
  kind: K,
  inputs: [number, number],
  props: P,
) =>
  Type.Object(
    { id: NodeId, kind: Type.Literal(kind), inputs: Inputs(inputs[0], inputs[1]), ...props },
    { additionalProperties: false },
  );

export const DenseNodeSchema = node('dense', [1, 1], {
  units: Type.Integer({ minimum: 1, maximum: 65536 }),
  activation: ActivationSchema,
});
export const Conv2dNodeSchema = node('conv2d', [1, 1], {
  filters: Type.Integer({ minimum: 1, maximum: 4096 }),
  kernelSize: KernelSize,
  strides: Stride,
  padding: Padding,
  activation: ActivationSchema,
});
export const DepthwiseConv2dNodeSchema = node('depthwise-conv2d', [1, 1], {
  kernelSize: KernelSize,
  strides: Stride,
  padding: Padding,
  depthMultiplier: Type.Integer({ minimum: 1, maximum: 8 }),
  activation: ActivationSchema,
});
export const MaxPool2dNodeSchema = node('max-pool2d', [1, 1], { poolSize: Type.Integer({ minimum: 2, maximum: 4 }), strides: Stride });
export const AvgPool2dNodeSchema = node('avg-pool2d', [1, 1], { poolSize: Type.Integer({ minimum: 2, maximum: 4 }), strides: Stride });
/** 1-D convolution over the time axis of a sequence (time steps × channels). */
export const Conv1dNodeSchema = node('conv1d', [1, 1], {
  filters: Type.Integer({ minimum: 1, maximum: 4096 }),
  kernelSize: KernelSize,
  strides: Stride,
  /** Gap between kernel taps (1 = contiguous); a dilated convolution has stride 1. */
  dilation: Type.Integer({ minimum: 1, maximum: 8 }),
  padding: Padding,
  activation: ActivationSchema,
});
export const MaxPool1dNodeSchema = node('max-pool1d', [1, 1], { poolSize: Type.Integer({ minimum: 2, maximum: 4 }), strides: Stride });
export const AvgPool1dNodeSchema = node('avg-pool1d', [1, 1], { poolSize: Type.Integer({ minimum: 2, maximum: 4 }), strides: Stride });
/** Recurrent layers over a sequence: the whole sequence of states (`returnSequences`) or the last step's. */
const recurrent = { units: Type.Integer({ minimum: 1, maximum: 4096 }), returnSequences: Type.Boolean() };
export const LstmNodeSchema = node('lstm', [1, 1], recurrent);
export const GruNodeSchema = node('gru', [1, 1], recurrent);
export const DropoutNodeSchema = node('dropout', [1, 1], { rate: Type.Number({ minimum: 0, maximum: 0.9 }) });
export const BatchNormNodeSchema = node('batch-norm', [1, 1], {});
export const ActivationNodeSchema = node('activation', [1, 1], { activation: ActivationSchema });
export const FlattenNodeSchema = node('flatten', [1, 1], {});
export const GlobalAvgPoolNodeSchema = node('global-avg-pool', [1, 1], {});
export const GlobalMaxPoolNodeSchema = node('global-max-pool', [1, 1], {});
/** Element-wise sum of inputs of equal shape: the skip connection. */
export const AddNodeSchema = node('add', [2, 4], {});
/** Concatenation along the last (channel or feature) axis. */
export const ConcatNodeSchema = node('concat', [2, 4], {});
/** Most applications one repeat node may ask for (the search space's `maxRepeats` is usually lower). */
export const MAX_REPEAT_TIMES = 16;
/**
 * Applies the genome's motif `motif` `times` times in sequence: the first application reads this
 * node's input, each later one the previous one's output; consumers of this node read the last
 * one's output. See `expandMotifs` for the layers this stands for.
 */
export const RepeatNodeSchema = node('repeat', [1, 1], {
  motif: Type.String({ minLength: 1, maxLength: 32 }),
  times: Type.Integer({ minimum: 1, maximum: MAX_REPEAT_TIMES }),
});

export const LayerNodeSchema = Type.Union([
  DenseNodeSchema,
  Conv2dNodeSchema,
  DepthwiseConv2dNodeSchema,
  MaxPool2dNodeSchema,
  AvgPool2dNodeSchema,
  Conv1dNodeSchema,
  MaxPool1dNodeSchema,
  AvgPool1dNodeSchema,
  LstmNodeSchema,
  GruNodeSchema,
  DropoutNodeSchema,
  BatchNormNodeSchema,
  ActivationNodeSchema,
  FlattenNodeSchema,
  GlobalAvgPoolNodeSchema,
  GlobalMaxPoolNodeSchema,
  AddNodeSchema,
  ConcatNodeSchema,
  RepeatNodeSchema,
]);
export type LayerNode = Static<typeof LayerNodeSchema>;
export type LayerKind = LayerNode['kind'];
export type NodeOfKind<K extends LayerKind> = Extract<LayerNode, { kind: K }>;

export const LAYER_KINDS: readonly LayerKind[] = [
  'dense',
  'conv2d',
  'depthwise-conv2d',
  'max-pool2d',
  'avg-pool2d',
  'conv1d',
  'max-pool1d',
  'avg-pool1d',
  'lstm',
  'gru',
  'dropout',
  'batch-norm',
  'activation',
  'flatten',
  'global-avg-pool',
  'global-max-pool',
  'add',
  'concat',
  'repeat',
];

export const OptimizerSchema = Type.Union([Type.Literal('adam'), Type.Literal('sgd'), Type.Literal('rmsprop')]);
export type OptimizerName = Static<typeof OptimizerSchema>;

/**
 * How the learning rate moves over one training of T optimizer steps (T = the job's epochs × the
 * steps of one epoch), after an optional linear warm-up over `warmupEpochs` epochs:
 * - `constant`: the gene's learning rate throughout;
 * - `cosine`: cosine annealing from the learning rate down to `minFactor` times it
 *   (lr_t = lr_min + ½ (lr − lr_min)(1 + cos(π t / T)), Loshchilov & Hutter, SGDR, ICLR 2017);
 * - `step`: multiplied by `factor` each time training passes one of `atFractions` of T.
 */
export const LearningRateScheduleSchema = Type.Union([
  Type.Object({ kind: Type.Literal('constant') }, { additionalProperties: false }),
  Type.Object(
    {
      kind: Type.Literal('cosine'),
      /** The last step's learning rate as a fraction of the gene's. */
      minFactor: Type.Number({ minimum: 0, maximum: 1 }),
      /** Epochs of linear warm-up from lr/W to lr before the decay starts (0 = none). */
      warmupEpochs: Type.Integer({ minimum: 0, maximum: 100 }),
    },
    { additionalProperties: false },
  ),
  Type.Object(
    {
      kind: Type.Literal('step'),
      /** Multiplier at each step point (common practice: 0.1). */
      factor: Type.Number({ exclusiveMinimum: 0, exclusiveMaximum: 1 }),
      /** Fractions of the training at which the rate is multiplied, ascending, each in (0, 1). */
      atFractions: Type.Array(Type.Number({ exclusiveMinimum: 0, exclusiveMaximum: 1 }), { minItems: 1, maxItems: 4 }),
      warmupEpochs: Type.Integer({ minimum: 0, maximum: 100 }),
    },
    { additionalProperties: false },
  ),
]);
export type LearningRateSchedule = Static<typeof LearningRateScheduleSchema>;
export type ScheduleKind = LearningRateSchedule['kind'];
export const SCHEDULE_KINDS: readonly ScheduleKind[] = ['constant', 'cosine', 'step'];

/** Random changes to each training image (never to validation or test samples). */
export const AugmentationSchema = Type.Object(
  {
    /** Shift by up to this many pixels in x and in y (each drawn per sample, uniform), zero fill. */
    shift: Type.Integer({ minimum: 0, maximum: 8 }),
    /** Mirror left to right with probability ½; only where the run file says flips keep the label. */
    flip: Type.Boolean(),
  },
  { additionalProperties: false },
);
export type Augmentation = Static<typeof AugmentationSchema>;

export const TrainingGenesSchema = Type.Object(
  {
    optimizer: OptimizerSchema,
    /** Step size; searched on a log scale. */
    learningRate: Type.Number({ exclusiveMinimum: 0, maximum: 1 }),
    batchSize: Type.Integer({ minimum: 1, maximum: 4096 }),
    /** L2 penalty on kernels (0 = none). */
    weightDecay: Type.Number({ minimum: 0, maximum: 0.1 }),
    /** Epochs of training an evaluation gets unless its job sets another budget. */
    epochs: Type.Integer({ minimum: 1, maximum: 1000 }),
    /** How the learning rate moves during training; absent: constant. */
    schedule: Type.Optional(LearningRateScheduleSchema),
    /** Image augmentation of training batches; absent: none. */
    augment: Type.Optional(AugmentationSchema),
    /** ε of label smoothing: training targets (1 − ε)·one-hot + ε/classes; absent or 0: none. */
    labelSmoothing: Type.Optional(Type.Number({ minimum: 0, maximum: 0.5 })),
    /**
     * Early stopping: end the training when the validation loss has not improved for this many
     * epochs (a training without validation, such as a final training, never stops early).
     * Absent: no early stopping.
     */
    patience: Type.Optional(Type.Integer({ minimum: 1, maximum: 100 })),
  },
  { additionalProperties: false },
);
export type TrainingGenes = Static<typeof TrainingGenesSchema>;

/**
 * A block defined once and used by `repeat` nodes. Its nodes read `input` (inside a motif that is
 * the tensor the motif is applied to) or each other; `output` names the node whose tensor one
 * application gives. Motifs do not nest: a motif's nodes are never `repeat` nodes.
 */
export const MotifSchema = Type.Object(
  {
    id: NodeId,
    nodes: Type.Array(LayerNodeSchema, { minItems: 1, maxItems: 64 }),
    output: Type.String({ minLength: 1, maxLength: 32 }),
  },
  { additionalProperties: false },
);
export type Motif = Static<typeof MotifSchema>;

export const GenomeSchema = Type.Object(
  {
    schemaVersion: Type.Literal(GENOME_SCHEMA_VERSION),
    nodes: Type.Array(LayerNodeSchema, { maxItems: 256 }),
    /** Id of the node that feeds the classifier head (`input` for a linear model). */
    output: Type.String({ minLength: 1, maxLength: 32 }),
    training: TrainingGenesSchema,
    /** Blocks that `repeat` nodes apply; absent (not empty) when the genome uses none. */
    motifs: Type.Optional(Type.Array(MotifSchema, { minItems: 1, maxItems: 16 })),
  },
  { additionalProperties: false },
);
export type Genome = Static<typeof GenomeSchema>;
