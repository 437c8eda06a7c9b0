import { describe, expect, it } from 'vitest';
import { analyzeGenome, describeGenome, type DataShape, type GenomeAnalysis } from './analyze.js';
import { checkGenome, formatGenomeIssues } from './validate.js';
import { defaultSearchSpace, defaultSearchSpaceFor, defaultSequenceSearchSpace } from './search-space-schema.js';
import type { Genome, LayerNode } from './genome-schema.js';

const TRAINING: Genome['training'] = { optimizer: 'adam', learningRate: 0.001, batchSize: 32, weightDecay: 0, epochs: 5 };
const genome = (nodes: LayerNode[], output = nodes.at(-1)?.id ?? 'input'): Genome => ({ schemaVersion: 1, nodes, output, training: TRAINING });
const SENSOR: DataShape = { inputShape: [20, 3], numClasses: 5 };
const conv1d = (id: string, input: string, extra: Partial<Extract<LayerNode, { kind: 'conv1d' }>> = {}): LayerNode => ({
  id,
  kind: 'conv1d',
  inputs: [input],
  filters: 4,
  kernelSize: 3,
  strides: 1,
  dilation: 1,
  padding: 'same',
  activation: 'relu',
  ...extra,
});

function analysis(g: Genome, data: DataShape): GenomeAnalysis {
  const r = analyzeGenome(g, data);
  if (!r.ok) throw new Error(`expected the genome to analyse: ${r.issues.map((i) => i.message).join('; ')}`);
  return r.analysis;
}
const table = (a: GenomeAnalysis) => a.nodes.map((n) => [n.id, n.outputShape, n.params, n.flops]);
const issues = (g: Genome, data: DataShape = SENSOR): string => {
  const r = analyzeGenome(g, data);
  if (r.ok) throw new Error('expected the genome to be refused');
  return r.issues.map((i) => `${i.nodeId}: ${i.message}`).join('\n');
};

describe('analyzeGenome on sequences (time steps × channels), hand-computed', () => {
  it('dilated conv1d → max pool → lstm (sequence) → gru (last step) on 20 steps × 3 channels, 5 classes', () => {
    const g = genome([
      conv1d('c1', 'input', { dilation: 2 }),
      { id: 'p', kind: 'max-pool1d', inputs: ['c1'], poolSize: 2, strides: 2 },
      { id: 'l', kind: 'lstm', inputs: ['p'], units: 6, returnSequences: true },
      { id: 'g', kind: 'gru', inputs: ['l'], units: 5, returnSequences: false },
    ]);
    const a = analysis(g, SENSOR);
    expect(table(a)).toEqual([
      // same padding keeps 20 steps; params 3·3·4 + 4 = 40; FLOPs 2·(3·3)·(20·4) = 1440
      ['c1', [20, 4], 40, 1440],
      // (20−2)/2 + 1 = 10 steps; one FLOP per pooled element: 2·10·4 = 80
      ['p', [10, 4], 0, 80],
      // four gates: 4·6·(4 inputs + 6 recurrent + 1 bias) = 264; FLOPs 2·10 steps·4·6·(4 + 6) = 4800
      ['l', [10, 6], 264, 4800],
      // three gates (TensorFlow.js's GRU has one bias per gate): 3·5·(6 + 5 + 1) = 180; FLOPs 2·10·3·5·(6 + 5) = 3300
      ['g', [5], 180, 3300],
      // 5·5 + 5 = 30 params; 2·5·5 = 50 FLOPs
      ['head-dense', [5], 30, 50],
    ]);
    expect([a.params, a.flops]).toEqual([514, 9670]);
    expect(describeGenome(g, 5)).toBe('conv1d 3×4 dil 2 relu → max-pool1d 2 → lstm 6 seq → gru 5 → head 5');
  });

  it('strided valid conv1d, average pool, global pools and flatten over time; the head flattens a sequence', () => {
    const a = analysis(genome([conv1d('c', 'input', { kernelSize: 5, strides: 2, padding: 'valid' }), { id: 'ap', kind: 'avg-pool1d', inputs: ['c'], poolSize: 3, strides: 1 }]), SENSOR);
    expect(table(a)).toEqual([
      // (20−5)/2 + 1 = 8 steps; params 5·3·4 + 4 = 64; FLOPs 2·(5·3)·(8·4) = 960
      ['c', [8, 4], 64, 960],
      // (8−3)/1 + 1 = 6 steps; FLOPs 3·6·4 = 72
      ['ap', [6, 4], 0, 72],
      ['head-flatten', [24], 0, 0],
      ['head-dense', [5], 125, 240],
    ]);
    // a global pool over time sums or compares every element: 20·3 = 60
    expect(table(analysis(genome([{ id: 'g', kind: 'global-max-pool', inputs: ['input'] }]), SENSOR))[0]).toEqual(['g', [3], 0, 60]);
    expect(table(analysis(genome([{ id: 'f', kind: 'flatten', inputs: ['input'] }]), SENSOR))[0]).toEqual(['f', [60], 0, 0]);
    expect(table(analysis(genome([{ id: 'b', kind: 'batch-norm', inputs: ['input'] }]), SENSOR))[0]).toEqual(['b', [20, 3], 12, 120]);
  });

  it('refuses what does not fit, naming the node and the fix', () => {
    expect(issues(genome([conv1d('c', 'input', { kernelSize: 5, dilation: 5, padding: 'valid' })]))).toMatch(/^c: kernel 5 \(dilation 5\) with 'valid' padding does not fit 20 time steps/);
    expect(issues(genome([conv1d('c', 'input', { dilation: 2, strides: 2 })]))).toMatch(/^c: a dilated conv1d \(dilation 2\) needs stride 1/);
    expect(issues(genome([{ id: 'l', kind: 'lstm', inputs: ['input'], units: 4, returnSequences: false }, { id: 'g', kind: 'gru', inputs: ['l'], units: 4, returnSequences: false }]))).toMatch(/^g: gru needs a sequence input \(time steps × channels\) but gets \[4\]/);
    expect(issues(genome([conv1d('c', 'input')]), { inputShape: [8, 8, 1], numClasses: 2 })).toMatch(/conv1d needs a sequence input/);
    expect(issues(genome([{ id: 'f', kind: 'flatten', inputs: ['input'] }]), { inputShape: [6], numClasses: 2 })).toMatch(/flat already; remove it/);
    expect(issues(genome([{ id: 'c', kind: 'conv2d', inputs: ['input'], filters: 2, kernelSize: 3, strides: 1, padding: 'same', activation: 'relu' }]))).toMatch(/conv2d needs a spatial input/);
  });
});

describe('checkGenome and the search spaces for sequences', () => {
  const good = genome([conv1d('c', 'input', { filters: 8, dilation: 2 }), { id: 'l', kind: 'lstm', inputs: ['c'], units: 16, returnSequences: false }]);
  const check = (g: Genome, space = defaultSequenceSearchSpace(), data: DataShape = SENSOR) => {
    const r = checkGenome(g, space, data);
    return r.ok ? 'ok' : formatGenomeIssues(r.issues);
  };

  it('the sequence space accepts conv1d and recurrent genomes; the image and table space leaves sequence kinds out', () => {
    expect(check(good)).toBe('ok');
    expect(check(genome([]))).toBe('ok');
    expect(defaultSearchSpaceFor([20, 3])).toEqual(defaultSequenceSearchSpace());
    expect(defaultSearchSpaceFor([8, 8, 1])).toEqual(defaultSearchSpace());
    expect(check(good, defaultSearchSpace())).toContain("layer kind 'lstm' is not allowed");
  });

  it('refuses settings outside the space and kinds of another data shape', () => {
    expect(check(genome([conv1d('c', 'input', { filters: 8, dilation: 3 })]))).toBe("node 'c': dilation 3 not in [1, 2, 4]");
    expect(check(genome([{ id: 'g', kind: 'gru', inputs: ['input'], units: 500, returnSequences: true }]))).toBe("node 'g': units 500 outside [8, 128]");
    const space = { ...defaultSequenceSearchSpace(), allowedKinds: [...defaultSequenceSearchSpace().allowedKinds, 'conv2d' as const] };
    expect(check(genome([{ id: 'c', kind: 'conv2d', inputs: ['input'], filters: 8, kernelSize: 3, strides: 1, padding: 'same', activation: 'relu' }]), space)).toContain(
      'this dataset has sequence samples (time steps × channels), so image layers',
    );
    const image = { ...defaultSequenceSearchSpace(), allowedKinds: defaultSequenceSearchSpace().allowedKinds };
    expect(check(good, image, { inputShape: [20, 3, 1], numClasses: 5 })).toContain('this dataset has image samples, so sequence layers (conv1d, 1-D pools, lstm, gru) cannot be used');
    expect(check(good, image, { inputShape: [20], numClasses: 5 })).toContain('this dataset has flat samples, so spatial layers');
  });
});
