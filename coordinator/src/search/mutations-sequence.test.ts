import { describe, expect, it } from 'vitest';
import { checkGenome, createRandom, defaultSearchSpace, defaultSequenceSearchSpace, formatGenomeIssues, genomeHash, SEQUENCE_KINDS, type DataShape, type Genome, type LayerNode } from '@netbreeder/shared-types';
import { blocksOf, insertBlock, removeBlock } from './block-mutations.js';
import { familyGenome } from './family-genome.js';
import { minimalGenome } from './minimal-genome.js';
import { mutate } from './mutations.js';
import { ctxFor, genome, IMAGE } from './test-fixtures.js';

/** Sequence samples: 32 time steps of 3 channels, 4 classes. */
const SEQUENCE: DataShape = { inputShape: [32, 3], numClasses: 4 };
const space = defaultSequenceSearchSpace();

function walk(data: DataShape, seeds: number, steps: number, s = space) {
  const out: { parent: Genome; child: Genome; operator: string }[] = [];
  for (let seed = 0; seed < seeds; seed++) {
    const rng = createRandom(`walk-${seed}`);
    let g = minimalGenome({ space: s, data, rng });
    for (let i = 0; i < steps; i++) {
      const r = mutate(g, { space: s, data, rng });
      out.push({ parent: g, child: r.genome, operator: r.mutation.operator });
      g = r.genome;
    }
  }
  return out;
}
const issues = (g: Genome) => {
  const r = checkGenome(g, space, SEQUENCE);
  return r.ok ? [] : [formatGenomeIssues(r.issues)];
};

describe('mutations on sequence data (time steps × channels)', () => {
  it('the minimal genome is the linear classifier on the flattened sequence', () => {
    const g = minimalGenome({ space, data: SEQUENCE, rng: createRandom(1) });
    expect([g.nodes, g.output]).toEqual([[], 'input']);
  });

  it('20 seeds × 30 chained mutations all pass checkGenome, differ from their parent, and grow conv1d, pool, lstm and gru layers', () => {
    const steps = walk(SEQUENCE, 20, 30);
    expect(steps).toHaveLength(600);
    expect(steps.flatMap((s) => issues(s.child))).toEqual([]);
    expect(steps.filter((s) => genomeHash(s.child) === genomeHash(s.parent))).toEqual([]);
    expect(Math.max(...steps.map((s) => s.child.nodes.length))).toBeGreaterThanOrEqual(6);
    const kinds = new Set(steps.flatMap((s) => s.child.nodes.map((n) => n.kind)));
    for (const k of ['conv1d', 'lstm', 'gru', 'global-avg-pool'] as const) expect(kinds, k).toContain(k);
    expect(kinds.has('max-pool1d') || kinds.has('avg-pool1d')).toBe(true);
    expect(kinds.has('conv2d')).toBe(false);
    const operators = new Set(steps.map((s) => s.operator));
    for (const op of ['insert-block', 'remove-block', 'change-kernel-size', 'change-width']) expect(operators, op).toContain(op);
  });

  it('walks on images with the image space never use a sequence kind', () => {
    const kinds = new Set(walk(IMAGE, 5, 30, defaultSearchSpace()).flatMap((s) => s.child.nodes.map((n) => n.kind)));
    expect([...kinds].filter((k) => SEQUENCE_KINDS.includes(k))).toEqual([]);
  });

  it('inserts conv1d and recurrent blocks whole, and removes them whole', () => {
    const base = genome([]); // one edge, input → head, of shape [32, 3]
    const inserted = Array.from({ length: 30 }, (_, seed) => insertBlock(base, ctxFor(SEQUENCE, seed, space))).filter((r) => r !== null);
    expect(inserted.length).toBe(30);
    expect(inserted.flatMap((r) => issues(r.genome))).toEqual([]);
    const anchors = new Set(inserted.map((r) => r.genome.nodes[0]!.kind));
    expect([...anchors].sort()).toEqual(['conv1d', 'gru', 'lstm']);
    for (const r of inserted) {
      expect(blocksOf(r.genome)).toEqual([r.genome.nodes.map((n: LayerNode) => n.id)]); // the whole chain is one block
      const removed = removeBlock(r.genome, ctxFor(SEQUENCE, 1, space))!;
      expect([removed.genome.nodes, removed.genome.output]).toEqual([[], 'input']);
    }
  });
});

describe('familyGenome on sequence data', () => {
  it('draws valid 1-D conv nets and LSTM or GRU stacks, seeded', () => {
    const drawn = Array.from({ length: 40 }, (_, seed) => familyGenome({ space, data: SEQUENCE, rng: createRandom(seed) })!);
    expect(drawn.flatMap(issues)).toEqual([]);
    const anchors = new Set(drawn.map((g) => g.nodes[0]!.kind));
    expect([...anchors].sort()).toEqual(['conv1d', 'gru', 'lstm']);
    for (const g of drawn.filter((g) => g.nodes[0]!.kind === 'conv1d')) expect(g.nodes.some((n) => n.kind === 'global-avg-pool' || n.kind === 'flatten')).toBe(true);
    expect(familyGenome({ space, data: SEQUENCE, rng: createRandom(3) })).toEqual(drawn[3]);
  });
});
