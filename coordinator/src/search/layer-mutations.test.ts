import { describe, expect, it } from 'vitest';
import { analyzeGenome, checkGenome, defaultSearchSpace, type Genome, type LayerNode, type SearchSpace } from '@netbreeder/shared-types';
import { addLayer, addSkip, changeActivation, changeKernelSize, changeStride, changeWidth, removeLayer, type MutationOperator } from './layer-mutations.js';
import { shapesOf } from './graph-edit.js';
import { conv, ctxFor, dense, FLAT, genome, IMAGE } from './test-fixtures.js';
import type { DataShape } from '@netbreeder/shared-types';

const SEEDS = Array.from({ length: 60 }, (_, i) => i);

/** Applies `op` once per seed; returns the non-null results, and checks the argument is untouched. */
function results(op: MutationOperator, g: Genome, data: DataShape, space: SearchSpace = defaultSearchSpace()) {
  const before = structuredClone(g);
  const out = SEEDS.map((s) => op(g, ctxFor(data, s, space))).filter((r) => r !== null);
  expect(g).toEqual(before);
  return out;
}
const node = (g: Genome, id: string) => g.nodes.find((n) => n.id === id)!;
const newNodes = (before: Genome, after: Genome) => after.nodes.filter((n) => !before.nodes.some((m) => m.id === n.id));

describe('addLayer', () => {
  it('on the linear image classifier adds one allowed layer between input and head', () => {
    const base = genome([]);
    const out = results(addLayer, base, IMAGE);
    expect(out).toHaveLength(SEEDS.length);
    const kinds = new Set<string>();
    for (const { genome: g, detail } of out) {
      expect(g.nodes).toHaveLength(1);
      const [n] = g.nodes as [LayerNode];
      expect(n.inputs).toEqual(['input']);
      expect(g.output).toBe(n.id);
      expect(n.id).toMatch(/^[A-Za-z][A-Za-z0-9_-]{0,31}$/);
      expect(defaultSearchSpace().allowedKinds).toContain(n.kind);
      expect(n.kind).not.toBe('dense'); // the tensor is still spatial
      if (n.kind === 'conv2d') expect(n.padding).toBe('same');
      expect(detail).toContain(`added ${n.kind}`);
      kinds.add(n.kind);
    }
    expect(kinds).toContain('conv2d');
    expect(kinds).toContain('flatten');
    expect(kinds).toContain('global-avg-pool');
  });

  it('on flat data adds only flat kinds', () => {
    const kinds = new Set(results(addLayer, genome([dense('d', 'input')]), FLAT).flatMap((r) => r.genome.nodes.map((n) => n.kind)));
    expect([...kinds].sort()).toEqual(['activation', 'batch-norm', 'dense', 'dropout']);
  });

  it('leaves the spatial domain (flatten, global pool) only on the edge into the head', () => {
    const base = genome([conv('c1', 'input')]);
    for (const { genome: g } of results(addLayer, base, IMAGE)) {
      const [n] = newNodes(base, g) as [LayerNode];
      if (n.kind === 'flatten' || n.kind === 'global-avg-pool' || n.kind === 'global-max-pool') expect(g.output).toBe(n.id);
      // spatial kinds are never put after the tensor became flat, and dense never before
      expect(analyzeGenome(g, IMAGE).ok).toBe(true);
    }
  });

  it('after a global pool, adds only flat kinds there', () => {
    const base = genome([{ id: 'gap', kind: 'global-avg-pool', inputs: ['input'] }]);
    for (const { genome: g } of results(addLayer, base, IMAGE)) {
      const [n] = newNodes(base, g) as [LayerNode];
      const shape = shapesOf(g, IMAGE)!.get(n.inputs[0]!)!;
      if (n.kind === 'dense') expect(shape).toHaveLength(1);
      if (n.kind === 'conv2d' || n.kind.includes('pool')) expect(shape).toHaveLength(3);
    }
  });

  it('uses only kinds the space allows', () => {
    const space = { ...defaultSearchSpace(), allowedKinds: ['depthwise-conv2d', 'avg-pool2d'] as SearchSpace['allowedKinds'] };
    const kinds = new Set(results(addLayer, genome([]), IMAGE, space).map((r) => r.genome.nodes[0]!.kind));
    expect([...kinds].sort()).toEqual(['avg-pool2d', 'depthwise-conv2d']);
  });

  it('does not apply at the node limit', () => {
    expect(results(addLayer, genome([dense('d', 'input')]), FLAT, { ...defaultSearchSpace(), maxNodes: 1 })).toEqual([]);
  });

  it('keeps ids unique as it adds many layers', () => {
    let g = genome([]);
    const ctx = ctxFor(FLAT, 5, { ...defaultSearchSpace(), maxNodes: 40 });
    for (let i = 0; i < 30; i++) g = addLayer(g, ctx)!.genome;
    expect(new Set(g.nodes.map((n) => n.id)).size).toBe(30);
    expect(checkGenome(g, { ...defaultSearchSpace(), maxNodes: 40, maxParams: 10_000_000 }, FLAT).ok).toBe(true);
  });
});

describe('removeLayer', () => {
  it('removes one node and rewires its consumers to its input', () => {
    const base = genome([dense('a', 'input'), dense('b', 'a'), dense('c', 'b')]);
    for (const { genome: g, detail } of results(removeLayer, base, FLAT)) {
      expect(g.nodes).toHaveLength(2);
      const gone = base.nodes.find((n) => !g.nodes.some((m) => m.id === n.id))!;
      expect(detail).toContain(`removed dense ${gone.id}`);
      for (const n of g.nodes) expect(n.inputs).not.toContain(gone.id);
      expect(checkGenome(g, defaultSearchSpace(), FLAT).ok).toBe(true);
    }
  });

  it('removing the only layer gives back the linear classifier', () => {
    const [r] = results(removeLayer, genome([dense('a', 'input')]), FLAT);
    expect(r!.genome.nodes).toEqual([]);
    expect(r!.genome.output).toBe('input');
  });

  it('removing a merge keeps one branch and prunes the other', () => {
    const base = genome([dense('a', 'input'), dense('b', 'a'), { id: 'sum', kind: 'add', inputs: ['b', 'a'] }]);
    const merges = results(removeLayer, base, FLAT).filter((r) => r.detail.includes('removed add'));
    expect(merges.length).toBeGreaterThan(0);
    for (const { genome: g } of merges) expect(['b', 'a']).toContain(g.output);
    expect(results(removeLayer, genome([]), FLAT)).toEqual([]);
  });
});

describe('changeWidth', () => {
  it('doubles or halves units and filters', () => {
    const base = genome([conv('c', 'input', 16), { id: 'f', kind: 'flatten', inputs: ['c'] }, dense('d', 'f', 32)]);
    const seen = new Set<string>();
    for (const { genome: g } of results(changeWidth, base, IMAGE)) {
      const c = node(g, 'c') as Extract<LayerNode, { kind: 'conv2d' }>;
      const d = node(g, 'd') as Extract<LayerNode, { kind: 'dense' }>;
      seen.add(`${c.filters}/${d.units}`);
    }
    expect([...seen].sort()).toEqual(['16/16', '16/64', '32/32', '8/32']);
  });

  it('stays within the range: at the top it can only halve', () => {
    for (const { genome: g } of results(changeWidth, genome([dense('d', 'input', 256)]), FLAT)) expect((g.nodes[0] as { units: number }).units).toBe(128);
    for (const { genome: g } of results(changeWidth, genome([dense('d', 'input', 12)]), FLAT)) expect([8, 24]).toContain((g.nodes[0] as { units: number }).units);
    expect(results(changeWidth, genome([]), FLAT)).toEqual([]);
  });
});

describe('changeKernelSize, changeStride, changeActivation', () => {
  const base = genome([conv('c', 'input'), { id: 'p', kind: 'max-pool2d', inputs: ['c'], poolSize: 2, strides: 2 }]);

  it('changeKernelSize picks another kernel size of the space', () => {
    const sizes = new Set(results(changeKernelSize, base, IMAGE).map((r) => (node(r.genome, 'c') as { kernelSize: number }).kernelSize));
    expect([...sizes].sort()).toEqual([1, 5]);
    expect(results(changeKernelSize, base, IMAGE, { ...defaultSearchSpace(), kernelSizes: [3] })).toEqual([]);
  });

  it('changeStride changes the stride of a conv or a pool', () => {
    for (const { genome: g, detail } of results(changeStride, base, IMAGE)) {
      const changed = g.nodes.filter((n, i) => (n as { strides: number }).strides !== (base.nodes[i] as { strides: number }).strides);
      expect(changed).toHaveLength(1);
      expect(detail).toMatch(/^stride of (c 1 → 2|p 2 → 1)$/);
    }
  });

  it('changeActivation picks another allowed activation', () => {
    for (const { genome: g } of results(changeActivation, base, IMAGE)) {
      const a = (node(g, 'c') as { activation: string }).activation;
      expect(a).not.toBe('relu');
      expect(defaultSearchSpace().activations).toContain(a);
    }
    expect(results(changeActivation, genome([]), IMAGE)).toEqual([]);
  });
});

describe('addSkip', () => {
  it('joins unequal channel counts only by concat (equal leading dims)', () => {
    const base = genome([conv('c1', 'input', 8)]);
    const out = results(addSkip, base, IMAGE);
    expect(out).toHaveLength(SEEDS.length);
    for (const { genome: g } of out) {
      const [m] = newNodes(base, g) as [LayerNode];
      expect(m.kind).toBe('concat');
      expect(m.inputs).toEqual(['c1', 'input']);
      expect(g.output).toBe(m.id);
    }
    expect(results(addSkip, base, IMAGE, { ...defaultSearchSpace(), allowedKinds: ['conv2d', 'add'] })).toEqual([]);
  });

  it('joins equal shapes by add, and the result passes checkGenome', () => {
    const base = genome([conv('c1', 'input', 8), conv('c2', 'c1', 8), conv('c3', 'c2', 8)]);
    const adds = results(addSkip, base, IMAGE, { ...defaultSearchSpace(), allowedKinds: ['conv2d', 'add'] });
    expect(adds.length).toBe(SEEDS.length);
    for (const { genome: g } of adds) {
      const [m] = newNodes(base, g) as [LayerNode];
      expect(m.kind).toBe('add');
      const shapes = shapesOf(g, IMAGE)!;
      expect(shapes.get(m.inputs[0]!)).toEqual(shapes.get(m.inputs[1]!));
      expect(checkGenome(g, defaultSearchSpace(), IMAGE).ok).toBe(true);
    }
  });

  it('needs something upstream to skip from', () => {
    expect(results(addSkip, genome([]), IMAGE)).toEqual([]);
  });
});
