import { describe, expect, it } from 'vitest';
import { analyzeGenome, describeGenome, topologicalOrder, windowOutputLength, type DataShape, type GenomeAnalysis } from './analyze.js';
import type { Genome, LayerNode } from './genome-schema.js';

const TRAINING: Genome['training'] = { optimizer: 'adam', learningRate: 0.001, batchSize: 32, weightDecay: 0, epochs: 5 };
const genome = (nodes: LayerNode[], output = nodes.at(-1)?.id ?? 'input'): Genome => ({ schemaVersion: 1, nodes, output, training: TRAINING });

function analysis(g: Genome, data: DataShape): GenomeAnalysis {
  const r = analyzeGenome(g, data);
  if (!r.ok) throw new Error(`expected the genome to analyse: ${r.issues.map((i) => i.message).join('; ')}`);
  return r.analysis;
}
const table = (a: GenomeAnalysis) => a.nodes.map((n) => [n.id, n.outputShape, n.params, n.flops]);

describe('analyzeGenome on hand-computed examples', () => {
  it('the linear classifier on 16×16×1 images, 4 classes', () => {
    // head-flatten: 16·16·1 = 256 features; head-dense: 256·4 weights + 4 biases = 1028 params,
    // 2·256·4 = 2048 FLOPs.
    const a = analysis(genome([]), { inputShape: [16, 16, 1], numClasses: 4 });
    expect(table(a)).toEqual([
      ['head-flatten', [256], 0, 0],
      ['head-dense', [4], 1028, 2048],
    ]);
    expect([a.params, a.flops]).toEqual([1028, 2048]);
  });

  it('a conv net with pooling, batch norm, valid padding and a global pool', () => {
    const g = genome([
      { id: 'c1', kind: 'conv2d', inputs: ['input'], filters: 8, kernelSize: 3, strides: 1, padding: 'same', activation: 'relu' },
      { id: 'p1', kind: 'max-pool2d', inputs: ['c1'], poolSize: 2, strides: 2 },
      { id: 'bn', kind: 'batch-norm', inputs: ['p1'] },
      { id: 'c2', kind: 'conv2d', inputs: ['bn'], filters: 16, kernelSize: 3, strides: 1, padding: 'valid', activation: 'relu' },
      { id: 'gap', kind: 'global-avg-pool', inputs: ['c2'] },
      { id: 'd1', kind: 'dense', inputs: ['gap'], units: 32, activation: 'relu' },
    ]);
    const a = analysis(g, { inputShape: [16, 16, 1], numClasses: 4 });
    expect(table(a)).toEqual([
      // same padding keeps 16×16; params 3·3·1·8 + 8 = 80; FLOPs 2·(3·3·1)·(16·16·8) = 2·9·2048 = 36864
      ['c1', [16, 16, 8], 80, 36864],
      // 2×2 window, stride 2: (16−2)/2 + 1 = 8; FLOPs one per pooled element: 2·2·(8·8·8) = 2048
      ['p1', [8, 8, 8], 0, 2048],
      // gamma, beta, moving mean and variance per channel: 4·8 = 32; FLOPs 2·(8·8·8) = 1024
      ['bn', [8, 8, 8], 32, 1024],
      // valid padding: (8−3)/1 + 1 = 6; params 3·3·8·16 + 16 = 1168; FLOPs 2·(3·3·8)·(6·6·16) = 2·72·576 = 82944
      ['c2', [6, 6, 16], 1168, 82944],
      // mean over 6·6 per channel: 576 elements summed
      ['gap', [16], 0, 576],
      // 16·32 + 32 = 544 params; 2·16·32 = 1024 FLOPs
      ['d1', [32], 544, 1024],
      // 32·4 + 4 = 132 params; 2·32·4 = 256 FLOPs
      ['head-dense', [4], 132, 256],
    ]);
    // 80 + 32 + 1168 + 544 + 132 = 1956; 36864 + 2048 + 1024 + 82944 + 576 + 1024 + 256 = 124736
    expect([a.params, a.flops]).toEqual([1956, 124736]);
  });

  it("stride 2 with 'same' padding on an odd size, an average pool of stride 1, and the head's flatten", () => {
    const g = genome([
      { id: 'c', kind: 'conv2d', inputs: ['input'], filters: 4, kernelSize: 3, strides: 2, padding: 'same', activation: 'tanh' },
      { id: 'p', kind: 'avg-pool2d', inputs: ['c'], poolSize: 2, strides: 1 },
    ]);
    const a = analysis(g, { inputShape: [7, 7, 3], numClasses: 2 });
    expect(table(a)).toEqual([
      // same padding, stride 2: ceil(7/2) = 4; params 3·3·3·4 + 4 = 112; FLOPs 2·27·(4·4·4) = 3456
      ['c', [4, 4, 4], 112, 3456],
      // (4−2)/1 + 1 = 3; FLOPs 2·2·(3·3·4) = 144
      ['p', [3, 3, 4], 0, 144],
      // the head flattens 3·3·4 = 36, then 36·2 + 2 = 74 params, 2·36·2 = 144 FLOPs
      ['head-flatten', [36], 0, 0],
      ['head-dense', [2], 74, 144],
    ]);
    expect([a.params, a.flops]).toEqual([186, 3744]);
  });

  it('a depthwise convolution', () => {
    const g = genome([{ id: 'dw', kind: 'depthwise-conv2d', inputs: ['input'], kernelSize: 3, strides: 1, padding: 'same', depthMultiplier: 2, activation: 'relu' }]);
    const a = analysis(g, { inputShape: [8, 8, 2], numClasses: 2 });
    // channels 2·2 = 4; params 3·3·2·2 kernel + 4 biases = 40; FLOPs 2·(3·3)·(8·8·4) = 4608;
    // head: 8·8·4 = 256 features, 256·2 + 2 = 514 params, 1024 FLOPs
    expect(table(a)).toEqual([
      ['dw', [8, 8, 4], 40, 4608],
      ['head-flatten', [256], 0, 0],
      ['head-dense', [2], 514, 1024],
    ]);
  });

  it('a flat network with add and concat merges', () => {
    const g = genome([
      { id: 'd1', kind: 'dense', inputs: ['input'], units: 8, activation: 'relu' },
      { id: 'd2', kind: 'dense', inputs: ['d1'], units: 8, activation: 'tanh' },
      { id: 'sum', kind: 'add', inputs: ['d2', 'd1'] },
      { id: 'cat', kind: 'concat', inputs: ['sum', 'input'] },
      { id: 'drop', kind: 'dropout', inputs: ['cat'], rate: 0.2 },
    ]);
    const a = analysis(g, { inputShape: [4], numClasses: 3 });
    expect(table(a)).toEqual([
      ['d1', [8], 40, 64], // 4·8 + 8; 2·4·8
      ['d2', [8], 72, 128], // 8·8 + 8; 2·8·8
      ['sum', [8], 0, 8], // one addition per element for two inputs
      ['cat', [12], 0, 0], // 8 + 4 features, free
      ['drop', [12], 0, 0],
      ['head-dense', [3], 39, 72], // 12·3 + 3; 2·12·3
    ]);
    expect([a.params, a.flops]).toEqual([151, 272]);
  });

  it('concat of spatial tensors adds channels', () => {
    const g = genome([
      { id: 'c', kind: 'conv2d', inputs: ['input'], filters: 5, kernelSize: 1, strides: 1, padding: 'same', activation: 'relu' },
      { id: 'cat', kind: 'concat', inputs: ['c', 'input'] },
      { id: 'g', kind: 'global-max-pool', inputs: ['cat'] },
    ]);
    const a = analysis(g, { inputShape: [4, 4, 3], numClasses: 2 });
    expect(a.nodes.map((n) => n.outputShape)).toEqual([[4, 4, 5], [4, 4, 8], [8], [2]]);
  });
});

describe('windowOutputLength follows the TensorFlow rule', () => {
  // 'same': ceil(n / s); 'valid': floor((n − k) / s) + 1 (TensorFlow's conv and pool output size, from memory)
  it.each([
    [16, 3, 1, 'same', 16],
    [7, 3, 2, 'same', 4],
    [16, 3, 1, 'valid', 14],
    [16, 2, 2, 'valid', 8],
    [7, 2, 2, 'valid', 3],
    [2, 3, 1, 'valid', 0],
  ] as const)('n=%i k=%i s=%i %s → %i', (n, k, s, p, expected) => {
    expect(windowOutputLength(n, k, s, p)).toBe(expected);
  });
});

describe('topologicalOrder', () => {
  it('puts every node after its inputs whatever the stored order', () => {
    const g = genome(
      [
        { id: 'sum', kind: 'add', inputs: ['b', 'a'] },
        { id: 'b', kind: 'dense', inputs: ['a'], units: 8, activation: 'relu' },
        { id: 'a', kind: 'dense', inputs: ['input'], units: 8, activation: 'relu' },
      ],
      'sum',
    );
    const r = topologicalOrder(g);
    expect(r.ok).toBe(true);
    if (r.ok) {
      const ids = r.order.map((n) => n.id);
      expect(ids.indexOf('a')).toBeLessThan(ids.indexOf('b'));
      expect(ids.indexOf('b')).toBeLessThan(ids.indexOf('sum'));
    }
  });
});

describe('describeGenome', () => {
  it('reads the layers in order', () => {
    const g = genome([
      { id: 'c', kind: 'conv2d', inputs: ['input'], filters: 16, kernelSize: 3, strides: 2, padding: 'same', activation: 'relu' },
      { id: 'g', kind: 'global-avg-pool', inputs: ['c'] },
    ]);
    expect(describeGenome(g, 4)).toBe('conv2d 3×3×16 /2 relu → global-avg-pool → head 4');
  });
});
