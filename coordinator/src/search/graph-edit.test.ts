import { describe, expect, it } from 'vitest';
import { ancestorsOf, bypassNode, edgesOf, freshId, insertOnEdge, pruneDead, shapesOf } from './graph-edit.js';
import { conv, dense, FLAT, genome, IMAGE } from './test-fixtures.js';

describe('graph edits', () => {
  const chain = genome([dense('a', 'input'), dense('b', 'a')]);

  it('edgesOf lists every input edge and the head edge last', () => {
    expect(edgesOf(chain)).toEqual([
      { from: 'input', to: 'a' },
      { from: 'a', to: 'b' },
      { from: 'b', to: null },
    ]);
  });

  it('freshId gives the first unused id of the kind, valid for the schema', () => {
    const g = genome([conv('conv1', 'input'), conv('conv3', 'conv1')]);
    expect(freshId(g, 'conv2d')).toBe('conv2');
    expect(freshId(g, 'global-avg-pool')).toBe('gap1');
    expect(freshId(g, 'depthwise-conv2d')).toMatch(/^[A-Za-z][A-Za-z0-9_-]{0,31}$/);
  });

  it('insertOnEdge rewires only that edge', () => {
    const g = insertOnEdge(chain, { from: 'a', to: 'b' }, { id: 'x', kind: 'dropout', inputs: ['a'], rate: 0.1 });
    expect(g.nodes.map((n) => [n.id, n.inputs])).toEqual([
      ['a', ['input']],
      ['x', ['a']],
      ['b', ['x']],
    ]);
    const h = insertOnEdge(chain, { from: 'b', to: null }, { id: 'y', kind: 'dropout', inputs: ['b'], rate: 0.1 });
    expect(h.output).toBe('y');
    expect(chain.nodes.map((n) => n.inputs)).toEqual([['input'], ['a']]); // untouched
  });

  it('bypassNode rewires consumers and the head', () => {
    expect(bypassNode(chain, 'a', 'input').nodes.map((n) => [n.id, n.inputs])).toEqual([['b', ['input']]]);
    expect(bypassNode(chain, 'b', 'a').output).toBe('a');
  });

  it('bypassNode drops a merge left with one input, and prunes dead branches', () => {
    // a → b → sum(b, a) → d; removing b makes sum(a, a), which collapses to a.
    const g = genome([dense('a', 'input'), dense('b', 'a'), { id: 'sum', kind: 'add', inputs: ['b', 'a'] }, dense('d', 'sum')]);
    const without = bypassNode(g, 'b', 'a');
    expect(without.nodes.map((n) => [n.id, n.inputs])).toEqual([
      ['a', ['input']],
      ['d', ['a']],
    ]);
    // removing the merge in favour of `a` leaves b unused: pruned
    const noSkip = bypassNode(g, 'sum', 'a');
    expect(noSkip.nodes.map((n) => n.id)).toEqual(['a', 'd']);
  });

  it('pruneDead keeps only what leads to the output', () => {
    expect(pruneDead(genome([dense('a', 'input'), dense('b', 'input')], 'b')).nodes.map((n) => n.id)).toEqual(['b']);
  });

  it('ancestorsOf and shapesOf', () => {
    const g = genome([conv('c1', 'input'), conv('c2', 'c1', 4), { id: 'cat', kind: 'concat', inputs: ['c2', 'input'] }]);
    expect([...ancestorsOf(g, 'cat')].sort()).toEqual(['c1', 'c2', 'input']);
    expect(ancestorsOf(g, 'c1')).toEqual(new Set(['input']));
    const shapes = shapesOf(g, IMAGE)!;
    expect(Object.fromEntries(shapes)).toEqual({ input: [16, 16, 1], c1: [16, 16, 8], c2: [16, 16, 4], cat: [16, 16, 5] });
    expect(shapesOf(g, FLAT)).toBeNull();
  });
});
