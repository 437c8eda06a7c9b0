import { describe, expect, it } from 'vitest';
import type { Genome, LayerNode } from '@netbreeder/shared-types';
import { architectureSimilarity, architectureTokens, selectEnsemble, type EnsembleCandidate } from './ensemble-selection.js';
import { accuracyOf, averagePredictions } from './ensemble-average.js';

const TRAINING: Genome['training'] = { optimizer: 'adam', learningRate: 0.001, batchSize: 32, weightDecay: 0, epochs: 5 };
const genome = (nodes: LayerNode[], optimizer: Genome['training']['optimizer'] = 'adam'): Genome => ({ schemaVersion: 1, nodes, output: nodes.at(-1)?.id ?? 'input', training: { ...TRAINING, optimizer } });
const conv = (id: string, input: string, filters: number): LayerNode => ({ id, kind: 'conv2d', inputs: [input], filters, kernelSize: 3, strides: 1, padding: 'same', activation: 'relu' });
const dense = (id: string, input: string, units: number): LayerNode => ({ id, kind: 'dense', inputs: [input], units, activation: 'relu' });
const pool = (id: string, input: string): LayerNode => ({ id, kind: 'max-pool2d', inputs: [input], poolSize: 2, strides: 2 });

const convNet = genome([conv('c1', 'input', 16), pool('p1', 'c1'), conv('c2', 'p1', 32)]);
const convNetWider = genome([conv('c1', 'input', 17), pool('p1', 'c1'), conv('c2', 'p1', 33)]); // same width buckets
const denseNet = genome([dense('d1', 'input', 64)], 'sgd');
const candidate = (id: string, g: Genome, accuracy: number): EnsembleCandidate => ({ id, genomeHash: `h-${id}`, genome: g, accuracy });

describe('architecture similarity (hand-computed token multisets)', () => {
  it('names each layer by kind and size bucket, plus the optimizer', () => {
    expect(architectureTokens(convNet)).toEqual(['conv2d/k3/s1/w4/relu', 'max-pool2d/p2', 'conv2d/k3/s1/w5/relu', 'optimizer/adam']);
  });
  it('names sequence layers by kind, kernel, dilation, width bucket and what a recurrent layer returns', () => {
    const sequenceNet = genome([
      { id: 'c', kind: 'conv1d', inputs: ['input'], filters: 16, kernelSize: 5, strides: 1, dilation: 2, padding: 'same', activation: 'relu' },
      { id: 'p', kind: 'avg-pool1d', inputs: ['c'], poolSize: 2, strides: 2 },
      { id: 'l', kind: 'lstm', inputs: ['p'], units: 32, returnSequences: true },
      { id: 'g', kind: 'gru', inputs: ['l'], units: 8, returnSequences: false },
    ]);
    expect(architectureTokens(sequenceNet)).toEqual(['conv1d/k5/s1/d2/w4/relu', 'avg-pool1d/p2', 'lstm/w5/seq', 'gru/w3/last', 'optimizer/adam']);
  });
  it('is 1 for the same architecture, 0 for nothing shared, and a Jaccard ratio in between', () => {
    expect(architectureSimilarity(convNet, convNetWider)).toBe(1);
    expect(architectureSimilarity(convNet, denseNet)).toBe(0);
    // {conv w4, pool, optimizer adam} shared of {conv w4, pool, conv w5, adam}: 3 / 4
    const shorter = genome([conv('c1', 'input', 16), pool('p1', 'c1')]);
    expect(architectureSimilarity(convNet, shorter)).toBe(3 / 4);
    expect(architectureSimilarity(shorter, convNet)).toBe(3 / 4);
  });
});

describe('greedy ensemble selection', () => {
  const pool = [candidate('a', convNet, 0.9), candidate('b', convNetWider, 0.89), candidate('c', denseNet, 0.85)];

  it('without a penalty takes the most accurate', () => {
    expect(selectEnsemble(pool, 2, 0).map((p) => p.id)).toEqual(['a', 'b']);
  });
  it('with a penalty prefers a different architecture over a near copy', () => {
    // b scores 0.89 - 0.1 * 1 = 0.79, c scores 0.85 - 0.1 * 0 = 0.85
    const picks = selectEnsemble(pool, 2, 0.1);
    expect(picks.map((p) => p.id)).toEqual(['a', 'c']);
    expect(picks[1]).toMatchObject({ similarity: 0, nearestHash: 'h-a' });
    expect(picks[1]!.score).toBeCloseTo(0.85, 12);
    // a third member is the near copy after all
    expect(selectEnsemble(pool, 3, 0.1).map((p) => p.id)).toEqual(['a', 'c', 'b']);
  });
  it('counts a genome once and stops when the pool runs out', () => {
    expect(selectEnsemble([pool[0]!, { ...pool[0]!, id: 'a2' }], 4, 0.1).map((p) => p.id)).toEqual(['a']);
    expect(() => selectEnsemble(pool, 0, 0.1)).toThrow(/size/);
  });
});

describe('averaging predictions', () => {
  it('takes the class of the highest mean probability', () => {
    // sample 0: member 0 says class 0 (0.6), member 1 says class 1 (0.9): mean 0.35 / 0.65 → class 1
    // sample 1: both lean to class 0
    const { mean, predictions } = averagePredictions([new Float32Array([0.6, 0.4, 0.7, 0.3]), new Float32Array([0.1, 0.9, 0.8, 0.2])], 2);
    expect(Array.from(mean).map((v) => +v.toFixed(4))).toEqual([0.35, 0.65, 0.75, 0.25]);
    expect(Array.from(predictions)).toEqual([1, 0]);
    expect(accuracyOf(predictions, [1, 1])).toBe(0.5);
  });
  it('refuses members scored on different samples', () => {
    expect(() => averagePredictions([new Float32Array(4), new Float32Array(6)], 2)).toThrow(/same samples/);
  });
});
