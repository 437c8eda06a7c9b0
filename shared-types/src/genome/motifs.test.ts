import { describe, expect, it } from 'vitest';
import { analyzeGenome, describeGenome, type DataShape, type GenomeAnalysis } from './analyze.js';
import { canonicalGenome, genomeHash } from './canonical.js';
import type { Genome, LayerNode, Motif } from './genome-schema.js';
import { expandedLayerCount, expandMotifs } from './motifs.js';
import { defaultSearchSpace, type SearchSpace } from './search-space-schema.js';
import { checkGenome, formatGenomeIssues } from './validate.js';

const IMAGE: DataShape = { inputShape: [16, 16, 1], numClasses: 4 };
const FLAT: DataShape = { inputShape: [4], numClasses: 3 };
const TRAINING: Genome['training'] = { optimizer: 'adam', learningRate: 0.001, batchSize: 32, weightDecay: 0, epochs: 5 };

const conv = (id: string, input: string, extra: Partial<Extract<LayerNode, { kind: 'conv2d' }>> = {}): LayerNode => ({
  id,
  kind: 'conv2d',
  inputs: [input],
  filters: 8,
  kernelSize: 3,
  strides: 1,
  padding: 'same',
  activation: 'relu',
  ...extra,
});
/** conv 3×3×8 → batch norm → relu, reading the motif's input. */
const cell = (id = 'cell'): Motif => ({
  id,
  nodes: [conv('c', 'input'), { id: 'b', kind: 'batch-norm', inputs: ['c'] }, { id: 'a', kind: 'activation', inputs: ['b'], activation: 'relu' }],
  output: 'a',
});
const repeat = (id: string, input: string, motif: string, times: number): LayerNode => ({ id, kind: 'repeat', inputs: [input], motif, times });
const withMotifs = (nodes: LayerNode[], motifs: Motif[], output = nodes.at(-1)!.id): Genome => ({ schemaVersion: 1, nodes, output, training: TRAINING, motifs });
const stacked = (times: number) => withMotifs([repeat('r', 'input', 'cell', times)], [cell()]);

function analysis(g: Genome, data: DataShape): GenomeAnalysis {
  const r = analyzeGenome(g, data);
  if (!r.ok) throw new Error(`expected the genome to analyse: ${formatGenomeIssues(r.issues)}`);
  return r.analysis;
}
function issuesOf(g: unknown, data: DataShape = IMAGE, space: SearchSpace = defaultSearchSpace()): string {
  const r = checkGenome(g, space, data);
  if (r.ok) throw new Error('expected the genome to be refused, but it passed');
  return formatGenomeIssues(r.issues);
}

describe('expandMotifs', () => {
  it('replaces a repeat by its motif once per application, chained, with names r.k.node', () => {
    const g = withMotifs([repeat('r', 'input', 'cell', 2), { id: 'g', kind: 'global-avg-pool', inputs: ['r'] }], [cell()]);
    const { genome: flat, repeatOutputs } = expandMotifs(g);
    expect(flat.nodes.map((n) => [n.id, n.inputs])).toEqual([
      ['r.1.c', ['input']],
      ['r.1.b', ['r.1.c']],
      ['r.1.a', ['r.1.b']],
      ['r.2.c', ['r.1.a']],
      ['r.2.b', ['r.2.c']],
      ['r.2.a', ['r.2.b']],
      ['g', ['r.2.a']],
    ]);
    expect(flat.output).toBe('g');
    expect(flat.motifs).toBeUndefined();
    expect([...repeatOutputs]).toEqual([['r', 'r.2.a']]);
    expect(expandedLayerCount(g)).toBe(7);
  });

  it('chains two repeats and points the head at the last one', () => {
    const g = withMotifs([repeat('r1', 'input', 'cell', 1), repeat('r2', 'r1', 'cell', 2)], [cell()]);
    const { genome: flat } = expandMotifs(g);
    expect(flat.nodes.find((n) => n.id === 'r2.1.c')!.inputs).toEqual(['r1.1.a']);
    expect(flat.output).toBe('r2.2.a');
  });

  it('returns a genome without repeats as it is', () => {
    const g: Genome = { schemaVersion: 1, nodes: [conv('c', 'input')], output: 'c', training: TRAINING };
    expect(expandMotifs(g).genome).toBe(g);
  });
});

describe('analyzeGenome counts every application', () => {
  it('a conv-bn-relu motif stacked 3 times on 16×16×1, 4 classes (hand-computed)', () => {
    // Application 1: conv 3·3·1·8 + 8 = 80 params, 2·(3·3·1)·(16·16·8) = 36864 FLOPs; batch norm
    // 4·8 = 32 params, 2·16·16·8 = 4096 FLOPs. Applications 2 and 3 read 8 channels: conv
    // 3·3·8·8 + 8 = 584 params, 2·(3·3·8)·2048 = 294912 FLOPs; batch norm as before.
    // Head: 16·16·8 = 2048 features → 2048·4 + 4 = 8196 params, 2·2048·4 = 16384 FLOPs.
    const a = analysis(stacked(3), IMAGE);
    expect(a.params).toBe(80 + 32 + 2 * (584 + 32) + 8196);
    expect(a.flops).toBe(36864 + 4096 + 2 * (294912 + 4096) + 16384);
    expect(a.nodes.map((n) => n.id)).toEqual(['r.1.c', 'r.1.b', 'r.1.a', 'r.2.c', 'r.2.b', 'r.2.a', 'r.3.c', 'r.3.b', 'r.3.a', 'r', 'head-flatten', 'head-dense']);
    expect(a.nodes.find((n) => n.id === 'r')).toEqual({ id: 'r', kind: 'repeat', outputShape: [16, 16, 8], params: 0, flops: 0 });
  });

  it('gives the same totals as the same layers written out', () => {
    const inline: Genome = {
      schemaVersion: 1,
      nodes: expandMotifs(stacked(2)).genome.nodes.map((n) => ({ ...n, id: n.id.replaceAll('.', '_'), inputs: n.inputs.map((i) => i.replaceAll('.', '_')) }) as LayerNode),
      output: 'r_2_a',
      training: TRAINING,
    };
    const [a, b] = [analysis(stacked(2), IMAGE), analysis(inline, IMAGE)];
    expect([a.params, a.flops]).toEqual([b.params, b.flops]);
  });

  it('accepts a motif that changes the shape when it can follow itself (a strided conv)', () => {
    const down: Motif = { id: 'down', nodes: [conv('c', 'input', { strides: 2, activation: 'relu' })], output: 'c' };
    const a = analysis(withMotifs([repeat('r', 'input', 'down', 3)], [down]), IMAGE);
    expect(a.nodes.find((n) => n.id === 'r')!.outputShape).toEqual([2, 2, 8]);
  });

  it('describes a repeat with its motif', () => {
    expect(describeGenome(stacked(3), 4)).toBe('3× cell(conv2d 3×3×8 relu → batch-norm → relu) → head 4');
  });
});

describe('checkGenome refuses broken motifs, naming the field and the fix', () => {
  it('accepts a good motif genome', () => {
    const r = checkGenome(stacked(4), defaultSearchSpace(), IMAGE);
    expect(r.ok ? [] : formatGenomeIssues(r.issues)).toEqual([]);
  });

  it('an unknown motif', () => {
    expect(issuesOf(withMotifs([repeat('r', 'input', 'nope', 2)], [cell()]))).toMatch(/node 'r': repeat names motif 'nope', which is not in the genome's motifs; add it to motifs or name one of \[cell\]/);
  });

  it('a motif node reading a node outside the motif', () => {
    const leaky: Motif = { ...cell(), nodes: [conv('c', 'stem'), ...cell().nodes.slice(1)] };
    const g = withMotifs([conv('stem', 'input'), repeat('r', 'stem', 'cell', 2)], [leaky]);
    expect(issuesOf(g)).toMatch(/motif 'cell': input 'stem' is not a node of the motif; inside a motif, nodes read 'input'/);
  });

  it('a motif whose output one application cannot take from the previous one', () => {
    const squash: Motif = { id: 'squash', nodes: [{ id: 'g', kind: 'global-avg-pool', inputs: ['input'] }], output: 'g' };
    expect(checkGenome(withMotifs([repeat('r', 'input', 'squash', 1)], [squash]), defaultSearchSpace(), IMAGE).ok).toBe(true);
    expect(issuesOf(withMotifs([repeat('r', 'input', 'squash', 2)], [squash]))).toMatch(
      /node 'r': application 2 of motif 'squash', its node 'g': global-avg-pool needs a spatial input .* so motif 'squash' must accept the shape it gives \(or use times 1\)/,
    );
  });

  it('a repeat count above the search space cap (maxRepeats, default 4)', () => {
    expect(issuesOf(stacked(5))).toMatch(/node 'r': times 5 is above the search space's maxRepeats 4; lower times or raise maxRepeats/);
    expect(checkGenome(stacked(5), { ...defaultSearchSpace(), maxRepeats: 6 }, IMAGE).ok).toBe(true);
    const noDefault: SearchSpace = { ...defaultSearchSpace() };
    delete noDefault.maxRepeats;
    expect(issuesOf(stacked(5), IMAGE, noDefault)).toMatch(/maxRepeats 4/);
  });

  it('maxNodes counts each application of a motif', () => {
    expect(issuesOf(stacked(4), IMAGE, { ...defaultSearchSpace(), maxNodes: 11 })).toMatch(/12 nodes once motifs are expanded .*, more than the search space's 11/);
    expect(checkGenome(stacked(4), { ...defaultSearchSpace(), maxNodes: 12 }, IMAGE).ok).toBe(true);
  });

  it('parameter and FLOP caps count every application', () => {
    const params = analysis(stacked(3), IMAGE).params;
    expect(checkGenome(stacked(3), { ...defaultSearchSpace(), maxParams: params }, IMAGE).ok).toBe(true);
    expect(issuesOf(stacked(3), IMAGE, { ...defaultSearchSpace(), maxParams: params - 1 })).toMatch(/parameters, above the cap/);
    const flops = analysis(stacked(3), IMAGE).flops;
    expect(issuesOf(stacked(3), IMAGE, { ...defaultSearchSpace(), maxFlops: flops - 1 })).toMatch(/FLOPs per sample, above the cap/);
  });

  it('an unused motif, a nested repeat, an output outside the motif, a duplicate motif id', () => {
    expect(issuesOf(withMotifs([repeat('r', 'input', 'cell', 1)], [cell(), cell('spare')]))).toMatch(/motif 'spare' is used by no repeat node; remove it from motifs/);
    const nested: Motif = { id: 'outer', nodes: [repeat('x', 'input', 'cell', 2)], output: 'x' };
    expect(issuesOf(withMotifs([repeat('r', 'input', 'outer', 1), repeat('s', 'r', 'cell', 1)], [cell(), nested]))).toMatch(/motif 'outer' holds a repeat node, but motifs do not nest/);
    expect(issuesOf(withMotifs([repeat('r', 'input', 'cell', 1)], [{ ...cell(), output: 'input' }]))).toMatch(/motif 'cell': output 'input' is not one of its nodes/);
    expect(issuesOf(withMotifs([repeat('r', 'input', 'cell', 1)], [cell(), cell()]))).toMatch(/motifs: the id 'cell' is used twice/);
  });

  it('a motif node outside the space, a spatial motif on flat data, repeats switched off', () => {
    const wide: Motif = { ...cell(), nodes: [conv('c', 'input', { filters: 100 }), ...cell().nodes.slice(1)] };
    expect(issuesOf(withMotifs([repeat('r', 'input', 'cell', 2)], [wide]))).toMatch(/node 'c': in motif 'cell': filters 100 outside \[4, 64\]/);
    expect(issuesOf(stacked(2), FLAT)).toMatch(/flat samples, so spatial layers/);
    const noRepeats = { ...defaultSearchSpace(), allowedKinds: defaultSearchSpace().allowedKinds.filter((k) => k !== 'repeat') };
    expect(issuesOf(stacked(2), IMAGE, noRepeats)).toMatch(/node 'r': layer kind 'repeat' is not allowed/);
  });

  it('a repeat count of 0 or an empty motif list, by the schema', () => {
    expect(issuesOf(stacked(0))).toMatch(/\/nodes\/0 /); // the node union's schema error names the node, as for every kind
    expect(issuesOf({ ...stacked(1), nodes: [], output: 'input', motifs: [] })).toMatch(/motifs/);
  });
});

describe('canonical form with motifs', () => {
  it('includes the motifs, renamed m0… with their own nodes renamed n0…', () => {
    const c = canonicalGenome(stacked(3));
    expect(c.nodes).toEqual([{ id: 'n0', kind: 'repeat', inputs: ['input'], motif: 'm0', times: 3 }]);
    expect(c.motifs).toEqual([{ id: 'm0', nodes: [{ ...conv('n0', 'input') }, { id: 'n1', kind: 'batch-norm', inputs: ['n0'] }, { id: 'n2', kind: 'activation', inputs: ['n1'], activation: 'relu' }], output: 'n2' }]);
  });

  it('ignores motif and node names, not repeat counts or motif contents', () => {
    const renamed = withMotifs([repeat('stack', 'input', 'block', 3)], [{ id: 'block', nodes: [conv('k', 'input'), { id: 'z', kind: 'batch-norm', inputs: ['k'] }, { id: 'q', kind: 'activation', inputs: ['z'], activation: 'relu' }], output: 'q' }]);
    expect(genomeHash(renamed)).toBe(genomeHash(stacked(3)));
    expect(genomeHash(stacked(2))).not.toBe(genomeHash(stacked(3)));
    const wider: Motif = { ...cell(), nodes: [conv('c', 'input', { filters: 16 }), ...cell().nodes.slice(1)] };
    expect(genomeHash(withMotifs([repeat('r', 'input', 'cell', 3)], [wider]))).not.toBe(genomeHash(stacked(3)));
  });

  it('a motif applied once differs from the same block written out (they mutate differently)', () => {
    const inline: Genome = { schemaVersion: 1, nodes: cell().nodes, output: 'a', training: TRAINING };
    expect(genomeHash(stacked(1))).not.toBe(genomeHash(inline));
    expect(canonicalGenome(inline)).not.toHaveProperty('motifs');
  });
});
