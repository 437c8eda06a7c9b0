import { GENOME_SCHEMA_VERSION, type Genome, type LayerNode, type TrainingGenes } from '@netbreeder/shared-types';

/**
 * Genomes the engine's tests and benchmark share: the reference networks of the training-engine
 * issue (ref-mlp, ref-cnn, a skip connection with batch norm) and small graphs covering every
 * layer kind.
 */

const genes = (overrides: Partial<TrainingGenes> = {}): TrainingGenes => ({
  optimizer: 'adam',
  learningRate: 0.001,
  batchSize: 64,
  weightDecay: 0,
  epochs: 1,
  ...overrides,
});

/** A layer node without its inputs (distributes over the union of node kinds). */
export type NodeSpec = LayerNode extends infer N ? (N extends LayerNode ? Omit<N, 'inputs'> : never) : never;

/** A chain of nodes, each fed by the one before (the first by the dataset input). */
export function chainGenome(nodes: NodeSpec[], training: Partial<TrainingGenes> = {}): Genome {
  const full = nodes.map((n, i) => ({ ...n, inputs: [i === 0 ? 'input' : nodes[i - 1]!.id] }) as LayerNode);
  return { schemaVersion: GENOME_SCHEMA_VERSION, nodes: full, output: full.length ? full[full.length - 1]!.id : 'input', training: genes(training) };
}

/** Softmax regression: the implicit head alone. */
export const linearGenome = (training: Partial<TrainingGenes> = {}): Genome => chainGenome([], training);

/** ref-mlp: 784 → dense 256 relu → dense 128 relu → (head) 10 softmax; batch 64, Adam. */
export const refMlp = (): Genome =>
  chainGenome([
    { id: 'd1', kind: 'dense', units: 256, activation: 'relu' },
    { id: 'd2', kind: 'dense', units: 128, activation: 'relu' },
  ]);

/** ref-cnn: 28×28×1 → conv 3×3×16 same relu → max-pool 2 → conv 3×3×32 same relu → max-pool 2 → flatten → (head) 10 softmax. */
export const refCnn = (): Genome =>
  chainGenome([
    { id: 'c1', kind: 'conv2d', filters: 16, kernelSize: 3, strides: 1, padding: 'same', activation: 'relu' },
    { id: 'p1', kind: 'max-pool2d', poolSize: 2, strides: 2 },
    { id: 'c2', kind: 'conv2d', filters: 32, kernelSize: 3, strides: 1, padding: 'same', activation: 'relu' },
    { id: 'p2', kind: 'max-pool2d', poolSize: 2, strides: 2 },
    { id: 'f', kind: 'flatten' },
  ]);

/** cnn-bn: ref-cnn with batch norm between each convolution and its relu (conv → bn → relu → max-pool, twice), the hand-made image family's block. */
export const refCnnBn = (): Genome =>
  chainGenome([
    { id: 'c1', kind: 'conv2d', filters: 16, kernelSize: 3, strides: 1, padding: 'same', activation: 'linear' },
    { id: 'b1', kind: 'batch-norm' },
    { id: 'r1', kind: 'activation', activation: 'relu' },
    { id: 'p1', kind: 'max-pool2d', poolSize: 2, strides: 2 },
    { id: 'c2', kind: 'conv2d', filters: 32, kernelSize: 3, strides: 1, padding: 'same', activation: 'linear' },
    { id: 'b2', kind: 'batch-norm' },
    { id: 'r2', kind: 'activation', activation: 'relu' },
    { id: 'p2', kind: 'max-pool2d', poolSize: 2, strides: 2 },
    { id: 'f', kind: 'flatten' },
  ]);

/** A residual block with batch norm: conv → bn → relu → conv → bn, added to the block's input, for 28×28×1 input. */
export const refSkipBn = (): Genome => ({
  schemaVersion: GENOME_SCHEMA_VERSION,
  nodes: [
    { id: 'stem', kind: 'conv2d', inputs: ['input'], filters: 16, kernelSize: 3, strides: 1, padding: 'same', activation: 'relu' },
    { id: 'pool', kind: 'max-pool2d', inputs: ['stem'], poolSize: 2, strides: 2 },
    { id: 'ca', kind: 'conv2d', inputs: ['pool'], filters: 16, kernelSize: 3, strides: 1, padding: 'same', activation: 'linear' },
    { id: 'bna', kind: 'batch-norm', inputs: ['ca'] },
    { id: 'ra', kind: 'activation', inputs: ['bna'], activation: 'relu' },
    { id: 'cb', kind: 'conv2d', inputs: ['ra'], filters: 16, kernelSize: 3, strides: 1, padding: 'same', activation: 'linear' },
    { id: 'bnb', kind: 'batch-norm', inputs: ['cb'] },
    { id: 'sum', kind: 'add', inputs: ['bnb', 'pool'] },
    { id: 'out', kind: 'activation', inputs: ['sum'], activation: 'relu' },
    { id: 'gap', kind: 'global-avg-pool', inputs: ['out'] },
  ],
  output: 'gap',
  training: genes(),
});

/** Two branches (conv and depthwise, one strided) joined by concat, then dropout and a dense layer. */
export const concatDepthwiseGenome = (training: Partial<TrainingGenes> = {}): Genome => ({
  schemaVersion: GENOME_SCHEMA_VERSION,
  nodes: [
    { id: 'a', kind: 'conv2d', inputs: ['input'], filters: 4, kernelSize: 3, strides: 2, padding: 'same', activation: 'relu' },
    { id: 'b', kind: 'depthwise-conv2d', inputs: ['input'], kernelSize: 5, strides: 2, padding: 'same', depthMultiplier: 2, activation: 'tanh' },
    { id: 'cat', kind: 'concat', inputs: ['a', 'b'] },
    { id: 'avg', kind: 'avg-pool2d', inputs: ['cat'], poolSize: 2, strides: 1 },
    { id: 'gmp', kind: 'global-max-pool', inputs: ['avg'] },
    { id: 'drop', kind: 'dropout', inputs: ['gmp'], rate: 0.25 },
    { id: 'fc', kind: 'dense', inputs: ['drop'], units: 8, activation: 'swish' },
  ],
  output: 'fc',
  training: genes(training),
});

/**
 * Repeated motifs on an image: a conv stem, a conv → batch norm → relu motif applied `times` times,
 * a max pool, then a residual motif (conv → batch norm, added to the motif's input, relu) applied
 * twice, a global average pool and a dense layer.
 */
export const motifGenome = (times = 3): Genome => ({
  schemaVersion: GENOME_SCHEMA_VERSION,
  nodes: [
    { id: 'stem', kind: 'conv2d', inputs: ['input'], filters: 8, kernelSize: 3, strides: 1, padding: 'same', activation: 'relu' },
    { id: 'body', kind: 'repeat', inputs: ['stem'], motif: 'cell', times },
    { id: 'pool', kind: 'max-pool2d', inputs: ['body'], poolSize: 2, strides: 2 },
    { id: 'res', kind: 'repeat', inputs: ['pool'], motif: 'residual', times: 2 },
    { id: 'gap', kind: 'global-avg-pool', inputs: ['res'] },
    { id: 'fc', kind: 'dense', inputs: ['gap'], units: 12, activation: 'relu' },
  ],
  output: 'fc',
  training: genes(),
  motifs: [
    {
      id: 'cell',
      nodes: [
        { id: 'c', kind: 'conv2d', inputs: ['input'], filters: 12, kernelSize: 3, strides: 1, padding: 'same', activation: 'linear' },
        { id: 'bn', kind: 'batch-norm', inputs: ['c'] },
        { id: 'act', kind: 'activation', inputs: ['bn'], activation: 'relu' },
      ],
      output: 'act',
    },
    {
      id: 'residual',
      nodes: [
        { id: 'c', kind: 'conv2d', inputs: ['input'], filters: 12, kernelSize: 3, strides: 1, padding: 'same', activation: 'linear' },
        { id: 'bn', kind: 'batch-norm', inputs: ['c'] },
        { id: 'sum', kind: 'add', inputs: ['bn', 'input'] },
        { id: 'act', kind: 'activation', inputs: ['sum'], activation: 'relu' },
      ],
      output: 'act',
    },
  ],
});

/** Repeated motifs on flat samples: a dense → dropout motif applied three times. */
export const flatMotifGenome = (): Genome => ({
  schemaVersion: GENOME_SCHEMA_VERSION,
  nodes: [{ id: 'mlp', kind: 'repeat', inputs: ['input'], motif: 'layer', times: 3 }],
  output: 'mlp',
  training: genes(),
  motifs: [
    {
      id: 'layer',
      nodes: [
        { id: 'd', kind: 'dense', inputs: ['input'], units: 24, activation: 'relu' },
        { id: 'drop', kind: 'dropout', inputs: ['d'], rate: 0.2 },
      ],
      output: 'drop',
    },
  ],
});
