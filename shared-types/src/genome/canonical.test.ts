import { describe, expect, it } from 'vitest';
import { canonicalGenome, genomeHash, stableStringify } from './canonical.js';
import type { Genome, LayerNode } from './genome-schema.js';

/** A residual conv net, written with its nodes out of order and with arbitrary ids. */
const base = (): Genome => ({
  schemaVersion: 1,
  nodes: [
    { id: 'gap', kind: 'global-avg-pool', inputs: ['sum'] },
    { id: 'c2', kind: 'conv2d', inputs: ['c1'], filters: 8, kernelSize: 3, strides: 1, padding: 'same', activation: 'relu' },
    { id: 'sum', kind: 'add', inputs: ['c2', 'c1'] },
    { id: 'c1', kind: 'conv2d', inputs: ['input'], filters: 8, kernelSize: 3, strides: 1, padding: 'same', activation: 'relu' },
    { id: 'd', kind: 'dense', inputs: ['gap'], units: 32, activation: 'tanh' },
  ],
  output: 'd',
  training: { optimizer: 'adam', learningRate: 0.001, batchSize: 32, weightDecay: 0, epochs: 5 },
});

/** `genome` with every id passed through `rename` (the input keeps its id). */
function renamed(genome: Genome, rename: (id: string) => string): Genome {
  const r = (id: string) => (id === 'input' ? id : rename(id));
  return {
    ...genome,
    nodes: genome.nodes.map((n) => ({ ...n, id: r(n.id), inputs: n.inputs.map(r) }) as LayerNode),
    output: r(genome.output),
  };
}

const withNode = (g: Genome, id: string, patch: Record<string, unknown>): Genome => ({
  ...g,
  nodes: g.nodes.map((n) => (n.id === id ? ({ ...n, ...patch } as LayerNode) : n)),
});

describe('canonical form and hash', () => {
  it('renamed ids and reordered nodes give the same canonical form and hash', () => {
    const a = base();
    const b = renamed({ ...a, nodes: [...a.nodes].reverse() }, (id) => `layer_${id.toUpperCase()}`);
    const c = renamed({ ...a, nodes: [a.nodes[3]!, a.nodes[1]!, a.nodes[2]!, a.nodes[0]!, a.nodes[4]!] }, (id) => `x${id.length}${id}`);
    expect(canonicalGenome(b)).toEqual(canonicalGenome(a));
    expect(genomeHash(b)).toBe(genomeHash(a));
    expect(genomeHash(c)).toBe(genomeHash(a));
  });

  it('the canonical form names nodes n0, n1, … in post-order from the output', () => {
    const c = canonicalGenome(base());
    expect(c.nodes.map((n) => [n.id, n.kind, n.inputs])).toEqual([
      ['n0', 'conv2d', ['input']],
      ['n1', 'conv2d', ['n0']],
      ['n2', 'add', ['n1', 'n0']],
      ['n3', 'global-avg-pool', ['n2']],
      ['n4', 'dense', ['n3']],
    ]);
    expect(c.output).toBe('n4');
  });

  it('key order and float noise below 6 significant digits do not matter', () => {
    const a = base();
    const shuffledKeys = { training: { ...a.training }, output: a.output, nodes: a.nodes, schemaVersion: a.schemaVersion } as Genome;
    expect(genomeHash(shuffledKeys)).toBe(genomeHash(a));
    expect(genomeHash({ ...a, training: { ...a.training, learningRate: 0.001 + 1e-13 } })).toBe(genomeHash(a));
  });

  const changes: [string, (g: Genome) => Genome][] = [
    ['a width', (g) => withNode(g, 'c2', { filters: 16 })],
    ['a kernel size', (g) => withNode(g, 'c1', { kernelSize: 5 })],
    ['a stride', (g) => withNode(g, 'c1', { strides: 2 })],
    ['a padding', (g) => withNode(g, 'c2', { padding: 'valid' })],
    ['an activation', (g) => withNode(g, 'd', { activation: 'relu' })],
    ['a merge kind', (g) => withNode(g, 'sum', { kind: 'concat' })],
    ['the wiring', (g) => withNode(g, 'c2', { inputs: ['input'] })],
    ['the output', (g) => ({ ...g, output: 'gap', nodes: g.nodes.filter((n) => n.id !== 'd') })],
    ['an extra node', (g) => ({ ...g, output: 'x', nodes: [...g.nodes, { id: 'x', kind: 'dropout', inputs: ['d'], rate: 0.1 }] })],
    ['the learning rate', (g) => ({ ...g, training: { ...g.training, learningRate: 0.002 } })],
    ['the batch size', (g) => ({ ...g, training: { ...g.training, batchSize: 64 } })],
    ['the optimizer', (g) => ({ ...g, training: { ...g.training, optimizer: 'sgd' } })],
    ['the weight decay', (g) => ({ ...g, training: { ...g.training, weightDecay: 1e-4 } })],
    ['the epochs', (g) => ({ ...g, training: { ...g.training, epochs: 6 } })],
  ];
  it.each(changes)('changing %s gives another hash', (_name, change) => {
    expect(genomeHash(change(base()))).not.toBe(genomeHash(base()));
  });

  it('every change above gives a hash of its own', () => {
    const hashes = changes.map(([, change]) => genomeHash(change(base())));
    expect(new Set(hashes).size).toBe(changes.length);
  });

  it('is stable across runs: a pinned value', () => {
    // Computed once from base() with this implementation and pinned. Stored runs, lineage and the
    // cache of finished evaluations are keyed by this hash, so it must not move silently: if this
    // fails, the canonical form (node order, renaming, number rounding, key sorting) or the hash
    // changed, and every stored genome hash would change with it. Change the form only on purpose,
    // with a genome schema version bump and a migration of stored hashes.
    expect(genomeHash(base())).toBe('02abefde6731adc96136a62a7ef90bd6a533ed369ac2878670834db339f44ba5');
  });

  it('is 64 hex digits', () => {
    expect(genomeHash(base())).toMatch(/^[0-9a-f]{64}$/);
  });

  it('refuses a genome with a cycle or a dangling input', () => {
    expect(() => canonicalGenome(withNode(base(), 'c1', { inputs: ['d'] }))).toThrow(/cannot canonicalise an invalid genome: cycle/);
    expect(() => genomeHash(withNode(base(), 'c1', { inputs: ['ghost'] }))).toThrow(/input 'ghost' is not a node/);
  });

  it('does not modify its argument', () => {
    const g = base();
    const copy = structuredClone(g);
    canonicalGenome(g);
    expect(g).toEqual(copy);
  });
});

describe('stableStringify', () => {
  it('sorts keys at every depth and drops undefined fields', () => {
    expect(stableStringify({ b: 1, a: { d: [2, { z: 1, y: 2 }], c: undefined } })).toBe('{"a":{"d":[2,{"y":2,"z":1}]},"b":1}');
  });
  it('rounds non-integers to 6 significant digits', () => {
    expect(stableStringify([0.1 + 0.2, 1 / 3, 12345678])).toBe('[0.3,0.333333,12345678]');
  });
});
