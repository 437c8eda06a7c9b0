import { describe, expect, it } from 'vitest';
import { checkGenome, defaultSearchSpace, formatGenomeIssues, type DataShape, type Genome, type LayerNode, type SearchSpace } from '@netbreeder/shared-types';
import { blockFrom, blocksOf, duplicateBlock, insertBlock, removeBlock, scaleWidths } from './block-mutations.js';
import type { MutationOperator } from './layer-mutations.js';
import { conv, ctxFor, dense, FLAT, genome, IMAGE } from './test-fixtures.js';

const bn = (id: string, input: string): LayerNode => ({ id, kind: 'batch-norm', inputs: [input] });
const act = (id: string, input: string): LayerNode => ({ id, kind: 'activation', inputs: [input], activation: 'relu' });
const pool = (id: string, input: string): LayerNode => ({ id, kind: 'max-pool2d', inputs: [input], poolSize: 2, strides: 2 });
const drop = (id: string, input: string): LayerNode => ({ id, kind: 'dropout', inputs: [input], rate: 0.2 });

/** Two conv blocks (the first pooled), a global pool and a dense block. */
const imageNet = () =>
  genome([conv('c1', 'input', 8, { activation: 'linear' }), bn('b1', 'c1'), act('a1', 'b1'), pool('p1', 'a1'), conv('c2', 'p1', 16), bn('b2', 'c2'), { id: 'g', kind: 'global-avg-pool', inputs: ['b2'] }, dense('d', 'g', 32), drop('x', 'd')]);
/** Two dense blocks, the second without dropout. */
const flatNet = () => genome([dense('d1', 'input', 32), drop('x1', 'd1'), dense('d2', 'x1', 16)]);
/** The default space with linear activations allowed, so a new conv block is conv (linear) → batch norm → activation. */
const withLinear: SearchSpace = { ...defaultSearchSpace(), activations: [...defaultSearchSpace().activations, 'linear'] };

/** The operator's results for seeds 0..n-1 (nulls left out). */
function results(op: MutationOperator, g: Genome, data: DataShape, space: SearchSpace = defaultSearchSpace(), n = 30) {
  return Array.from({ length: n }, (_, seed) => op(g, ctxFor(data, seed, space))).filter((r) => r !== null);
}
const invalid = (gs: Genome[], data: DataShape, space: SearchSpace = defaultSearchSpace()) =>
  gs.flatMap((g) => {
    const r = checkGenome(g, space, data);
    return r.ok ? [] : [formatGenomeIssues(r.issues)];
  });
const kinds = (g: Genome, ids: readonly string[]) => ids.map((id) => g.nodes.find((n) => n.id === id)!.kind);

describe('blockFrom', () => {
  it('recognises conv → batch norm → activation → pool, conv → batch norm, and dense → dropout', () => {
    const g = imageNet();
    expect(blocksOf(g)).toEqual([['c1', 'b1', 'a1', 'p1'], ['c2', 'b2'], ['d', 'x']]);
    expect(blocksOf(flatNet())).toEqual([['d1', 'x1'], ['d2']]);
  });

  it('stops at a node with more than one reader (a skip leaves from it)', () => {
    const g = genome([conv('c', 'input'), bn('b', 'c'), act('a', 'b'), { id: 's', kind: 'add', inputs: ['a', 'b'] }]);
    expect(blockFrom(g, g.nodes[0]!)).toEqual(['c', 'b']);
  });
});

describe('insertBlock', () => {
  it('puts conv (linear) → batch norm → relu-like activation, sometimes → 2×2 max pool, on an image edge', () => {
    const rs = results(insertBlock, genome([]), IMAGE, withLinear);
    expect(rs).toHaveLength(30);
    const shapes = new Set<string>();
    for (const { genome: g } of rs) {
      const [first] = blocksOf(g);
      shapes.add(kinds(g, first!).join(' → '));
      const c = g.nodes[0] as Extract<LayerNode, { kind: 'conv2d' }>;
      expect([c.activation, c.kernelSize, c.strides, c.padding]).toEqual(['linear', 3, 1, 'same']);
      expect(['relu', 'elu', 'swish']).toContain((g.nodes[2] as { activation: string }).activation);
    }
    expect([...shapes].sort()).toEqual(['conv2d → batch-norm → activation', 'conv2d → batch-norm → activation → max-pool2d']);
    expect(invalid(rs.map((r) => r.genome), IMAGE, withLinear)).toEqual([]);
  });

  it('without linear activations in the space, the conv carries a relu-like activation and no activation node follows', () => {
    for (const { genome: g } of results(insertBlock, genome([]), IMAGE)) {
      expect(kinds(g, blocksOf(g)[0]!).slice(0, 2)).toEqual(['conv2d', 'batch-norm']);
      expect(g.nodes.some((n) => n.kind === 'activation')).toBe(false);
      expect(['relu', 'elu', 'swish']).toContain((g.nodes[0] as { activation: string }).activation);
    }
  });

  it('puts dense → dropout on flat data, and only kinds the space allows', () => {
    const rs = results(insertBlock, genome([]), FLAT);
    for (const { genome: g } of rs) expect(g.nodes.map((n) => n.kind)).toEqual(['dense', 'dropout']);
    expect(invalid(rs.map((r) => r.genome), FLAT)).toEqual([]);
    const noDropout = { ...defaultSearchSpace(), allowedKinds: defaultSearchSpace().allowedKinds.filter((k) => k !== 'dropout') };
    for (const { genome: g } of results(insertBlock, genome([]), FLAT, noDropout)) expect(g.nodes.map((n) => n.kind)).toEqual(['dense']);
    const noWeights = { ...defaultSearchSpace(), allowedKinds: defaultSearchSpace().allowedKinds.filter((k) => k !== 'dense' && k !== 'conv2d') };
    expect(results(insertBlock, genome([]), FLAT, noWeights)).toEqual([]);
  });

  it('inserts inside a chain, keeping the rest connected', () => {
    // a conv block (3 or 4 layers) on a spatial edge, a dense block (2) on a flat one
    for (const { genome: g } of results(insertBlock, imageNet(), IMAGE, withLinear)) expect(g.nodes.length).toBeGreaterThanOrEqual(imageNet().nodes.length + 2);
    expect(invalid(results(insertBlock, imageNet(), IMAGE, withLinear).map((r) => r.genome), IMAGE, withLinear)).toEqual([]);
  });
});

describe('removeBlock', () => {
  it('removes one whole block and reconnects its readers to its input', () => {
    const rs = results(removeBlock, imageNet(), IMAGE, withLinear);
    const removed = new Set(rs.map((r) => imageNet().nodes.filter((n) => !r.genome.nodes.some((m) => m.id === n.id)).map((n) => n.id).join(',')));
    expect([...removed].sort()).toEqual(['c1,b1,a1,p1', 'c2,b2', 'd,x']);
    const withoutFirst = rs.find((r) => !r.genome.nodes.some((n) => n.id === 'c1'))!.genome;
    expect(withoutFirst.nodes.find((n) => n.id === 'c2')!.inputs).toEqual(['input']);
    const withoutDense = rs.find((r) => !r.genome.nodes.some((n) => n.id === 'd'))!.genome;
    expect(withoutDense.output).toBe('g');
    expect(invalid(rs.map((r) => r.genome), IMAGE, withLinear)).toEqual([]);
    expect(invalid(results(removeBlock, flatNet(), FLAT).map((r) => r.genome), FLAT)).toEqual([]);
  });

  it('does not apply without a conv or dense layer', () => {
    expect(results(removeBlock, genome([{ id: 'g', kind: 'global-avg-pool', inputs: ['input'] }]), IMAGE)).toEqual([]);
  });
});

describe('duplicateBlock', () => {
  it('puts a copy with the same settings and new ids right after the block', () => {
    const rs = results(duplicateBlock, imageNet(), IMAGE, withLinear);
    const copiedDense = rs.find((r) => r.detail.startsWith('duplicated block dense d'))!.genome;
    expect(copiedDense.nodes.map((n) => n.id)).toEqual(['c1', 'b1', 'a1', 'p1', 'c2', 'b2', 'g', 'd', 'x', 'dense1', 'drop1']);
    expect(copiedDense.nodes.find((n) => n.id === 'dense1')).toEqual({ ...dense('d', 'g', 32), id: 'dense1', inputs: ['x'] });
    expect(copiedDense.output).toBe('drop1');
    const copiedConv = rs.find((r) => r.detail.startsWith('duplicated block conv2d c2'))!.genome;
    expect(copiedConv.nodes.find((n) => n.id === 'g')!.inputs).toEqual(['bn1']);
    expect(invalid(rs.map((r) => r.genome), IMAGE, withLinear)).toEqual([]);
    expect(invalid(results(duplicateBlock, flatNet(), FLAT).map((r) => r.genome), FLAT)).toEqual([]);
  });
});

describe('scaleWidths', () => {
  const widths = (g: Genome) => [...g.nodes, ...(g.motifs ?? []).flatMap((m) => m.nodes)].flatMap((n) => (n.kind === 'dense' ? [n.units] : n.kind === 'conv2d' ? [n.filters] : []));

  it('doubles or halves every conv and dense layer, motifs included, clamped to the space', () => {
    const g: Genome = {
      ...genome([conv('c', 'input', 8), { id: 'r', kind: 'repeat', inputs: ['c'], motif: 'm', times: 2 }, { id: 'g', kind: 'global-avg-pool', inputs: ['r'] }, dense('d', 'g', 200)]),
      motifs: [{ id: 'm', nodes: [conv('mc', 'input', 5)], output: 'mc' }],
    };
    const seen = new Set(results(scaleWidths, g, IMAGE).map((r) => widths(r.genome).join(',')));
    // ×2: 8 → 16, 200 → 256 (the units cap), 5 → 10; ×½: 8 → 4, 200 → 100, 5 → 4 (3 rounds below the filters floor of 4).
    expect([...seen].sort()).toEqual(['16,256,10', '4,100,4'].sort());
  });

  it('goes the other way when every layer sits at the bound, and does not apply without weight layers', () => {
    const atCap = genome([dense('a', 'input', 256), dense('b', 'a', 256)]);
    for (const r of results(scaleWidths, atCap, FLAT)) expect(widths(r.genome)).toEqual([128, 128]);
    expect(results(scaleWidths, genome([]), FLAT)).toEqual([]);
  });
});
