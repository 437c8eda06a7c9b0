import { describe, expect, it } from 'vitest';
import { analyzeGenome, checkGenome, createRandom, defaultSearchSpace, formatGenomeIssues, genomeHash, type DataShape, type Genome, type LayerNode, type Motif, type SearchSpace } from '@netbreeder/shared-types';
import type { MutationOperator } from './layer-mutations.js';
import { changeRepeatCount, insertRepeat, makeMotif, mutateMotif } from './motif-mutations.js';
import { DEFAULT_MUTATION_WEIGHTS, mutate, type MutationOperatorName } from './mutations.js';
import { minimalGenome } from './minimal-genome.js';
import { conv, ctxFor, dense, FLAT, genome, IMAGE } from './test-fixtures.js';

const repeat = (id: string, input: string, motif: string, times: number): LayerNode => ({ id, kind: 'repeat', inputs: [input], motif, times });
const cell: Motif = { id: 'cell', nodes: [conv('c', 'input', 8), { id: 'b', kind: 'batch-norm', inputs: ['c'] }], output: 'b' };
/** stem conv → cell ×2 → global pool → dense. */
const imageNet = (times = 2): Genome => ({
  ...genome([conv('stem', 'input', 8), repeat('r', 'stem', 'cell', times), { id: 'g', kind: 'global-avg-pool', inputs: ['r'] }, dense('d', 'g', 16)]),
  motifs: [cell],
});
/** dense layer motif ×2 on flat data, then a dense block. */
const flatNet = (): Genome => ({
  ...genome([repeat('r', 'input', 'layer', 2), dense('d', 'r', 16), { id: 'x', kind: 'dropout', inputs: ['d'], rate: 0.1 }]),
  motifs: [{ id: 'layer', nodes: [dense('u', 'input', 16)], output: 'u' }],
});

function results(op: MutationOperator, g: Genome, data: DataShape, space: SearchSpace = defaultSearchSpace(), n = 30) {
  return Array.from({ length: n }, (_, seed) => op(g, ctxFor(data, seed, space))).filter((r) => r !== null);
}
const issues = (g: Genome, data: DataShape) => {
  const r = checkGenome(g, defaultSearchSpace(), data);
  return r.ok ? [] : [formatGenomeIssues(r.issues)];
};
const timesOf = (g: Genome, id = 'r') => (g.nodes.find((n) => n.id === id) as { times: number }).times;
const noRepeats: SearchSpace = { ...defaultSearchSpace(), allowedKinds: defaultSearchSpace().allowedKinds.filter((k) => k !== 'repeat') };

describe('changeRepeatCount', () => {
  it('applies the motif once more or once less, within 1 … maxRepeats', () => {
    expect(new Set(results(changeRepeatCount, imageNet(2), IMAGE).map((r) => timesOf(r.genome)))).toEqual(new Set([1, 3]));
    for (const r of results(changeRepeatCount, imageNet(1), IMAGE)) expect(timesOf(r.genome)).toBe(2);
    for (const r of results(changeRepeatCount, imageNet(4), IMAGE)) expect(timesOf(r.genome)).toBe(3);
    for (const r of results(changeRepeatCount, imageNet(4), IMAGE, { ...defaultSearchSpace(), maxRepeats: 6 })) expect([3, 5]).toContain(timesOf(r.genome));
    expect(results(changeRepeatCount, imageNet(2), IMAGE).flatMap((r) => issues(r.genome, IMAGE))).toEqual([]);
  });
});

describe('mutateMotif', () => {
  it('changes the motif (so every application) and leaves the genome\'s own nodes alone', () => {
    for (const [g, data] of [
      [imageNet(), IMAGE],
      [flatNet(), FLAT],
    ] as const) {
      const rs = results(mutateMotif, g, data, defaultSearchSpace(), 40);
      expect(rs.length).toBeGreaterThan(20);
      for (const r of rs) {
        expect(r.genome.nodes).toEqual(g.nodes);
        expect(r.genome.motifs).not.toEqual(g.motifs);
        expect(r.detail).toMatch(/^in motif \w+: /);
      }
      // Most are valid; an operator may still break a rule (a stride that cannot follow itself), which mutate() retries.
      expect(rs.filter((r) => issues(r.genome, data).length === 0).length).toBeGreaterThan(rs.length / 2);
    }
  });

  it('reaches several kinds of change inside a motif', () => {
    const details = results(mutateMotif, imageNet(), IMAGE, defaultSearchSpace(), 60).map((r) => r.detail.split(': ')[1]!.split(' ')[0]);
    expect(new Set(details).size).toBeGreaterThanOrEqual(4);
  });
});

describe('makeMotif', () => {
  it('turns a block into a motif applied once: same layers, so the same parameter count', () => {
    const g = genome([conv('c1', 'input', 8), { id: 'b1', kind: 'batch-norm', inputs: ['c1'] }, conv('c2', 'b1', 16), { id: 'g', kind: 'global-avg-pool', inputs: ['c2'] }, dense('d', 'g', 16)]);
    const params = (x: Genome) => {
      const a = analyzeGenome(x, IMAGE);
      if (!a.ok) throw new Error(formatGenomeIssues(a.issues));
      return a.analysis.params;
    };
    const rs = results(makeMotif, g, IMAGE);
    const first = rs.find((r) => r.detail.startsWith('made block c1 → b1'))!.genome;
    expect(first.nodes.map((n) => n.id)).toEqual(['rep1', 'c2', 'g', 'd']);
    expect(first.nodes[0]).toEqual(repeat('rep1', 'input', 'motif1', 1));
    expect(first.nodes[1]!.inputs).toEqual(['rep1']);
    expect(first.motifs).toEqual([{ id: 'motif1', nodes: [conv('c1', 'input', 8), { id: 'b1', kind: 'batch-norm', inputs: ['c1'] }], output: 'b1' }]);
    const last = rs.find((r) => r.detail.startsWith('made block d'))!.genome;
    expect(last.output).toBe('rep1');
    for (const r of rs) {
      expect(params(r.genome)).toBe(params(g));
      expect(issues(r.genome, IMAGE)).toEqual([]);
      expect(genomeHash(r.genome)).not.toBe(genomeHash(g));
    }
  });

  it('adds a second motif beside an existing one', () => {
    const r = results(makeMotif, imageNet(), IMAGE).find((x) => x.detail.includes('block d'))!;
    expect(r.genome.motifs!.map((m) => m.id)).toEqual(['cell', 'motif1']);
    expect(issues(r.genome, IMAGE)).toEqual([]);
  });
});

describe('insertRepeat', () => {
  it('applies an existing motif once more on an edge of the rank it reads', () => {
    const rs = results(insertRepeat, imageNet(), IMAGE);
    expect(rs).toHaveLength(30);
    for (const r of rs) {
      const added = r.genome.nodes.filter((n) => n.kind === 'repeat' && n.id !== 'r');
      expect(added).toHaveLength(1);
      expect(added[0]).toMatchObject({ motif: 'cell', times: 1 });
      expect(issues(r.genome, IMAGE)).toEqual([]);
    }
    expect(results(insertRepeat, flatNet(), FLAT).flatMap((r) => issues(r.genome, FLAT))).toEqual([]);
  });
});

describe('motif operators', () => {
  it('do not apply when the space switches repeats off, nor without a motif (but a block)', () => {
    for (const op of [changeRepeatCount, mutateMotif, makeMotif, insertRepeat]) expect(results(op, imageNet(), IMAGE, noRepeats)).toEqual([]);
    const plain = genome([conv('c', 'input')]);
    for (const op of [changeRepeatCount, mutateMotif, insertRepeat]) expect(results(op, plain, IMAGE)).toEqual([]);
  });

  it('a removed repeat takes its motif with it', () => {
    const g: Genome = { ...genome([repeat('r', 'input', 'layer', 2), dense('d', 'r', 16)]), motifs: flatNet().motifs! };
    const zero = Object.fromEntries(Object.keys(DEFAULT_MUTATION_WEIGHTS).map((k) => [k, 0])) as Record<MutationOperatorName, number>;
    const rng = createRandom(3);
    for (let i = 0; i < 10; i++) {
      const child = mutate(g, { space: defaultSearchSpace(), data: FLAT, rng, weights: { ...zero, 'remove-layer': 1 } }).genome;
      if (!child.nodes.some((n) => n.kind === 'repeat')) expect(child.motifs).toBeUndefined();
    }
  });
});

describe('mutate with block and motif operators', () => {
  const structural: MutationOperatorName[] = ['insert-block', 'remove-block', 'scale-widths', 'duplicate-block', 'change-repeat-count', 'mutate-motif', 'make-motif', 'insert-repeat'];
  const onlyThese = Object.fromEntries(Object.keys(DEFAULT_MUTATION_WEIGHTS).map((k) => [k, structural.includes(k as MutationOperatorName) ? 1 : 0]));

  /** `steps` chained children from a minimal genome, using only the block and motif operators. */
  function walk(data: DataShape, seed: string, steps: number) {
    const rng = createRandom(seed);
    const space = defaultSearchSpace();
    let g = minimalGenome({ space, data, rng });
    const out: { operator: string; hash: string; genome: Genome }[] = [];
    for (let i = 0; i < steps; i++) {
      const r = mutate(g, { space, data, rng, weights: onlyThese });
      out.push({ operator: r.mutation.operator, hash: r.genomeHash, genome: r.genome });
      g = r.genome;
    }
    return out;
  }

  it.each([
    ['image', IMAGE],
    ['flat', FLAT],
  ] as const)('%s: every operator applies along seeded walks and every child is valid', (_name, data) => {
    const steps = Array.from({ length: 8 }, (_, s) => walk(data, `blocks-${s}`, 25)).flat();
    expect(steps.flatMap((s) => issues(s.genome, data))).toEqual([]);
    expect(new Set(steps.map((s) => s.operator))).toEqual(new Set(structural));
    expect(steps.some((s) => s.genome.nodes.some((n) => n.kind === 'repeat' && n.times > 1))).toBe(true);
  });

  it('the same seed gives the same sequence of operators and children; another seed another', () => {
    const a = walk(IMAGE, 'same', 30).map((s) => [s.operator, s.hash]);
    expect(walk(IMAGE, 'same', 30).map((s) => [s.operator, s.hash])).toEqual(a);
    expect(walk(IMAGE, 'other', 30).map((s) => [s.operator, s.hash])).not.toEqual(a);
  });
});
