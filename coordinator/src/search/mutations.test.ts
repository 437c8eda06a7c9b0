import { describe, expect, it } from 'vitest';
import { checkGenome, createRandom, defaultSearchSpace, genomeHash, type DataShape, type Genome, type SearchSpace } from '@netbreeder/shared-types';
import { minimalGenome } from './minimal-genome.js';
import { DEFAULT_MUTATION_WEIGHTS, mutate, MUTATION_OPERATORS, MutationError, type MutationOperatorName } from './mutations.js';
import { FLAT, IMAGE } from './test-fixtures.js';

/**
 * Walks `steps` mutations from a minimal genome for each seed, always continuing from the child,
 * and returns every child with its parent and operator.
 */
function walk(data: DataShape, seeds: number, steps: number, space: SearchSpace = defaultSearchSpace()) {
  const out: { parent: Genome; child: Genome; operator: string; attempts: number }[] = [];
  for (let seed = 0; seed < seeds; seed++) {
    const rng = createRandom(`walk-${seed}`);
    let g = minimalGenome({ space, data, rng });
    for (let i = 0; i < steps; i++) {
      const r = mutate(g, { space, data, rng });
      out.push({ parent: g, child: r.genome, operator: r.mutation.operator, attempts: r.attempts });
      g = r.genome;
    }
  }
  return out;
}

describe('mutate keeps genomes valid', () => {
  it.each([
    ['image [16, 16, 1], 4 classes', IMAGE],
    ['flat [4], 3 classes', FLAT],
  ] as const)('%s: 20 seeds × 30 chained mutations all pass checkGenome and differ from their parent', (_name, data) => {
    const steps = walk(data, 20, 30);
    expect(steps).toHaveLength(600);
    const invalid = steps.filter((s) => !checkGenome(s.child, defaultSearchSpace(), data).ok);
    expect(invalid).toEqual([]);
    expect(steps.filter((s) => genomeHash(s.child) === genomeHash(s.parent))).toEqual([]);
    // the walks actually grow networks, not only retune them
    expect(Math.max(...steps.map((s) => s.child.nodes.length))).toBeGreaterThanOrEqual(6);
  });

  it('every operator gets used on images; on flat data the spatial-only ones never are', () => {
    const image = new Set(walk(IMAGE, 20, 30).map((s) => s.operator));
    expect([...image].sort()).toEqual(Object.keys(MUTATION_OPERATORS).sort());
    const flat = new Set(walk(FLAT, 10, 30).map((s) => s.operator));
    expect(flat.has('change-kernel-size')).toBe(false);
    expect(flat.has('change-stride')).toBe(false);
  });

  it('uses only the kinds the space allows', () => {
    const space: SearchSpace = { ...defaultSearchSpace(), allowedKinds: ['conv2d', 'avg-pool2d', 'global-max-pool', 'dense', 'concat'] };
    const kinds = new Set(walk(IMAGE, 10, 30, space).flatMap((s) => s.child.nodes.map((n) => n.kind)));
    for (const k of kinds) expect(space.allowedKinds).toContain(k);
    expect(kinds.size).toBeGreaterThanOrEqual(4);
  });

  it('stays valid in a tight space, near its caps', () => {
    const space: SearchSpace = { ...defaultSearchSpace(), maxNodes: 6, maxParams: 6000, maxFlops: 400_000 };
    const steps = walk(IMAGE, 10, 30, space);
    expect(steps.filter((s) => !checkGenome(s.child, space, IMAGE).ok)).toEqual([]);
  });
});

describe('mutate', () => {
  it('never modifies the parent and shares no object with it', () => {
    const space = defaultSearchSpace();
    const rng = createRandom(3);
    let g = minimalGenome({ space, data: IMAGE, rng });
    for (let i = 0; i < 40; i++) {
      const before = structuredClone(g);
      const child = mutate(g, { space, data: IMAGE, rng }).genome;
      expect(g).toEqual(before);
      for (const n of child.nodes) expect(g.nodes.includes(n)).toBe(false);
      g = child;
    }
  });

  it('is deterministic in its seed', () => {
    const hashes = () => walk(IMAGE, 2, 25).map((s) => genomeHash(s.child));
    expect(hashes()).toEqual(hashes());
    const a = minimalGenome({ space: defaultSearchSpace(), data: IMAGE, rng: createRandom(1) });
    const child = (seed: number) => genomeHash(mutate(a, { space: defaultSearchSpace(), data: IMAGE, rng: createRandom(seed) }).genome);
    expect(child(10)).toBe(child(10));
    expect(new Set([10, 11, 12, 13, 14, 15].map(child)).size).toBeGreaterThan(3);
  });

  it('follows the weights: a lone positive weight picks that operator every time', () => {
    const space = defaultSearchSpace();
    const rng = createRandom(4);
    const parent = minimalGenome({ space, data: FLAT, rng });
    const zero = Object.fromEntries(Object.keys(DEFAULT_MUTATION_WEIGHTS).map((k) => [k, 0])) as Record<MutationOperatorName, number>;
    for (let i = 0; i < 20; i++) {
      expect(mutate(parent, { space, data: FLAT, rng, weights: { ...zero, 'change-optimizer': 1 } }).mutation.operator).toBe('change-optimizer');
    }
    expect(() => mutate(parent, { space, data: FLAT, rng, weights: zero })).toThrow(/every mutation weight is 0/);
  });

  it('draws operators in proportion to the default weights', () => {
    // On a genome where every operator applies and almost every draw is valid, the first draw's
    // operator is kept, so counts over many draws track the weights.
    const parent: Genome = {
      schemaVersion: 1,
      nodes: [
        { id: 'c1', kind: 'conv2d', inputs: ['input'], filters: 8, kernelSize: 3, strides: 1, padding: 'same', activation: 'relu' },
        { id: 'r', kind: 'repeat', inputs: ['c1'], motif: 'm', times: 2 },
        { id: 'c2', kind: 'conv2d', inputs: ['r'], filters: 8, kernelSize: 3, strides: 1, padding: 'same', activation: 'relu' },
        { id: 'g', kind: 'global-avg-pool', inputs: ['c2'] },
        { id: 'x', kind: 'dropout', inputs: ['g'], rate: 0.2 },
      ],
      output: 'x',
      training: { optimizer: 'adam', learningRate: 0.001, batchSize: 32, weightDecay: 1e-4, epochs: 5 },
      // A motif, so the motif operators apply too.
      motifs: [{ id: 'm', nodes: [{ id: 'mc', kind: 'conv2d', inputs: ['input'], filters: 8, kernelSize: 3, strides: 1, padding: 'same', activation: 'relu' }], output: 'mc' }],
    };
    const space = defaultSearchSpace();
    const rng = createRandom(5);
    const counts: Record<string, number> = {};
    const N = 2400;
    for (let i = 0; i < N; i++) {
      const { mutation, attempts } = mutate(parent, { space, data: IMAGE, rng });
      if (attempts === 1) counts[mutation.operator] = (counts[mutation.operator] ?? 0) + 1;
    }
    const total = Object.values(DEFAULT_MUTATION_WEIGHTS).reduce((a, b) => a + b, 0);
    for (const [op, w] of Object.entries(DEFAULT_MUTATION_WEIGHTS)) {
      const expected = (N * w) / total;
      // within 35% of the expected count (first-draw rejections lower some a little)
      expect(counts[op] ?? 0).toBeGreaterThan(expected * 0.65);
      expect(counts[op] ?? 0).toBeLessThan(expected * 1.35);
    }
  });

  it('throws MutationError when the space leaves no room to move', () => {
    const space: SearchSpace = {
      ...defaultSearchSpace(),
      maxNodes: 0,
      optimizers: ['adam'],
      learningRate: { min: 0.001, max: 0.001 },
      batchSizes: [32],
      weightDecay: { min: 0, max: 0 },
      epochs: { min: 5, max: 5 },
      // and no recipe genes to draw or change
      schedules: undefined,
      labelSmoothing: undefined,
      patience: undefined,
    };
    const parent = minimalGenome({ space, data: FLAT, rng: createRandom(1) });
    expect(() => mutate(parent, { space, data: FLAT, rng: createRandom(1), maxAttempts: 20 })).toThrow(MutationError);
    expect(() => mutate(parent, { space, data: FLAT, rng: createRandom(1), maxAttempts: 20 })).toThrow(/in 20 attempts; the search space leaves no room/);
  });
});
