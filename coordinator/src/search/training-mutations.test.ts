import { describe, expect, it } from 'vitest';
import { defaultSearchSpace, type Genome, type SearchSpace } from '@netbreeder/shared-types';
import { changeBatchSize, changeDropoutRate, changeEpochs, changeOptimizer, changeWeightDecay, perturbLearningRate } from './training-mutations.js';
import type { MutationOperator } from './layer-mutations.js';
import { ctxFor, dense, FLAT, genome } from './test-fixtures.js';

const SEEDS = Array.from({ length: 80 }, (_, i) => i);
function results(op: MutationOperator, g: Genome, space: SearchSpace = defaultSearchSpace()) {
  const before = structuredClone(g);
  const out = SEEDS.map((s) => op(g, ctxFor(FLAT, s, space))).filter((r) => r !== null);
  expect(g).toEqual(before);
  return out.map((r) => r.genome);
}

describe('training-gene mutations', () => {
  it('perturbLearningRate steps by a factor 2^±[0.25, 1] on a log scale, in range', () => {
    const out = results(perturbLearningRate, genome([], 'input', { learningRate: 0.001 }));
    expect(out).toHaveLength(SEEDS.length);
    const ratios = out.map((g) => Math.log2(g.training.learningRate / 0.001));
    for (const r of ratios) expect(Math.abs(r)).toBeGreaterThanOrEqual(0.249);
    for (const r of ratios) expect(Math.abs(r)).toBeLessThanOrEqual(1.001);
    expect(ratios.some((r) => r > 0) && ratios.some((r) => r < 0)).toBe(true);
    // only other genes untouched
    for (const g of out) expect({ ...g.training, learningRate: 0 }).toEqual({ ...genome([]).training, learningRate: 0 });
  });

  it('perturbLearningRate at the top of the range can only go down', () => {
    for (const g of results(perturbLearningRate, genome([], 'input', { learningRate: 0.03 }))) expect(g.training.learningRate).toBeLessThan(0.03);
    expect(results(perturbLearningRate, genome([], 'input', { learningRate: 0.001 }), { ...defaultSearchSpace(), learningRate: { min: 0.001, max: 0.001 } })).toEqual([]);
  });

  it('changeBatchSize moves one step along the sorted list', () => {
    const from32 = new Set(results(changeBatchSize, genome([], 'input', { batchSize: 32 })).map((g) => g.training.batchSize));
    expect([...from32].sort((a, b) => a - b)).toEqual([16, 64]);
    const from128 = new Set(results(changeBatchSize, genome([], 'input', { batchSize: 128 })).map((g) => g.training.batchSize));
    expect([...from128]).toEqual([64]);
    // a size the space does not list moves to the nearest listed one
    const from50 = new Set(results(changeBatchSize, genome([], 'input', { batchSize: 50 })).map((g) => g.training.batchSize));
    expect([...from50]).toEqual([64]);
  });

  it('changeOptimizer switches to another allowed optimizer', () => {
    const names = new Set(results(changeOptimizer, genome([])).map((g) => g.training.optimizer));
    expect([...names].sort()).toEqual(['rmsprop', 'sgd']);
    expect(results(changeOptimizer, genome([]), { ...defaultSearchSpace(), optimizers: ['adam'] })).toEqual([]);
  });

  it('changeWeightDecay turns 0 into a value in [max/100, max], and a value into 0 or a log step', () => {
    for (const g of results(changeWeightDecay, genome([], 'input', { weightDecay: 0 }))) {
      expect(g.training.weightDecay).toBeGreaterThanOrEqual(1e-5);
      expect(g.training.weightDecay).toBeLessThanOrEqual(1e-3);
    }
    const fromSome = results(changeWeightDecay, genome([], 'input', { weightDecay: 1e-4 })).map((g) => g.training.weightDecay);
    const zeros = fromSome.filter((v) => v === 0).length;
    expect(zeros).toBeGreaterThan(5); // one time in four, 80 draws
    expect(zeros).toBeLessThan(40);
    for (const v of fromSome.filter((x) => x > 0)) expect(Math.abs(Math.log2(v / 1e-4))).toBeGreaterThanOrEqual(0.249);
    expect(results(changeWeightDecay, genome([], 'input', { weightDecay: 0 }), { ...defaultSearchSpace(), weightDecay: { min: 0, max: 0 } })).toEqual([]);
  });

  it('changeDropoutRate moves one dropout rate by 0.05 to 0.2, in range', () => {
    const base = genome([dense('d', 'input'), { id: 'x', kind: 'dropout', inputs: ['d'], rate: 0.3 }]);
    for (const g of results(changeDropoutRate, base)) {
      const rate = (g.nodes[1] as { rate: number }).rate;
      expect(Math.abs(rate - 0.3)).toBeGreaterThanOrEqual(0.05 - 1e-9);
      expect(Math.abs(rate - 0.3)).toBeLessThanOrEqual(0.2 + 1e-9);
      expect(rate).toBeLessThanOrEqual(0.5);
      expect(Math.round(rate * 100)).toBeCloseTo(rate * 100, 9);
    }
    expect(results(changeDropoutRate, genome([dense('d', 'input')]))).toEqual([]);
  });

  it('changeEpochs moves the budget and stays in range', () => {
    const out = results(changeEpochs, genome([], 'input', { epochs: 10 })).map((g) => g.training.epochs);
    for (const e of out) {
      expect(e).not.toBe(10);
      expect(Math.abs(e - 10)).toBeLessThanOrEqual(5);
    }
    for (const g of results(changeEpochs, genome([], 'input', { epochs: 1 }))) expect(g.training.epochs).toBe(2);
    expect(results(changeEpochs, genome([], 'input', { epochs: 5 }), { ...defaultSearchSpace(), epochs: { min: 5, max: 5 } })).toEqual([]);
  });
});
