import { describe, expect, it } from 'vitest';
import { checkGenome, formatGenomeIssues, spaceIssuesForData } from './validate.js';
import { defaultSearchSpace, type SearchSpace } from './search-space-schema.js';
import type { Genome, LayerNode } from './genome-schema.js';
import type { DataShape } from './analyze.js';

const IMAGE: DataShape = { inputShape: [16, 16, 1], numClasses: 4 };
const FLAT: DataShape = { inputShape: [4], numClasses: 3 };
const TRAINING: Genome['training'] = { optimizer: 'adam', learningRate: 0.001, batchSize: 32, weightDecay: 0, epochs: 5 };

const genome = (nodes: LayerNode[], output = nodes.at(-1)?.id ?? 'input', training: Partial<Genome['training']> = {}): Genome => ({
  schemaVersion: 1,
  nodes,
  output,
  training: { ...TRAINING, ...training },
});
const conv = (id: string, input: string, filters = 8, extra: Partial<Extract<LayerNode, { kind: 'conv2d' }>> = {}): LayerNode => ({
  id,
  kind: 'conv2d',
  inputs: [input],
  filters,
  kernelSize: 3,
  strides: 1,
  padding: 'same',
  activation: 'relu',
  ...extra,
});
const dense = (id: string, input: string, units = 16): LayerNode => ({ id, kind: 'dense', inputs: [input], units, activation: 'relu' });

/** The issues of a genome that must fail; fails the test when the genome passes. */
function issuesOf(value: unknown, data: DataShape = IMAGE, space: SearchSpace = defaultSearchSpace()): string {
  const result = checkGenome(value, space, data);
  if (result.ok) throw new Error('expected the genome to be rejected, but it passed');
  return formatGenomeIssues(result.issues);
}

describe('checkGenome accepts good genomes', () => {
  const good: [string, Genome, DataShape][] = [
    ['the linear classifier on images', genome([]), IMAGE],
    ['the linear classifier on flat samples', genome([]), FLAT],
    [
      'a small conv net',
      genome([
        conv('c1', 'input'),
        { id: 'p1', kind: 'max-pool2d', inputs: ['c1'], poolSize: 2, strides: 2 },
        { id: 'bn', kind: 'batch-norm', inputs: ['p1'] },
        { id: 'g', kind: 'global-avg-pool', inputs: ['bn'] },
        { id: 'drop', kind: 'dropout', inputs: ['g'], rate: 0.3 },
        dense('d', 'drop', 32),
      ]),
      IMAGE,
    ],
    ['a linear conv before batch-norm (linear is no non-linearity, so the space need not list it)', genome([conv('c1', 'input', 8, { activation: 'linear' }), { id: 'bn', kind: 'batch-norm', inputs: ['c1'] }]), IMAGE],
    ['a residual block', genome([conv('c1', 'input'), conv('c2', 'c1'), { id: 'sum', kind: 'add', inputs: ['c2', 'c1'] }]), IMAGE],
    ['a concat of the input and a conv', genome([conv('c1', 'input'), { id: 'cat', kind: 'concat', inputs: ['c1', 'input'] }]), IMAGE],
    ['a flat MLP with a skip', genome([dense('a', 'input'), dense('b', 'a'), { id: 's', kind: 'add', inputs: ['a', 'b'] }]), FLAT],
  ];
  it.each(good)('%s', (_name, g, data) => {
    const result = checkGenome(g, defaultSearchSpace(), data);
    expect(result.ok ? [] : formatGenomeIssues(result.issues)).toEqual([]);
    if (result.ok) expect(result.analysis.params).toBeGreaterThan(0);
  });
});

describe('checkGenome rejects bad genomes, each with its reason', () => {
  it('a cycle', () => {
    const g = genome([dense('a', 'b'), dense('b', 'a')], 'b');
    expect(issuesOf(g, FLAT)).toMatch(/cycle .*a.*b.*; a genome must be acyclic/);
    // The cycle named is the one reached, after a branch that was fine.
    const branched = genome([dense('x', 'input'), dense('y', 'z'), dense('z', 'y'), { id: 'd', kind: 'add', inputs: ['x', 'y'] }], 'd');
    expect(issuesOf(branched, FLAT)).toContain('cycle y -> z -> y; a genome must be acyclic');
  });

  it('an unknown layer kind (a schema error at that node)', () => {
    const g = { ...genome([]), nodes: [{ id: 'x', kind: 'lstm', inputs: ['input'] }], output: 'x' };
    expect(issuesOf(g)).toMatch(/^\/nodes\/0 /);
  });

  it('a dangling input', () => {
    expect(issuesOf(genome([dense('a', 'ghost')]), FLAT)).toContain("node 'a': input 'ghost' is not a node of this genome");
  });

  it('an output that is not a node', () => {
    expect(issuesOf(genome([dense('a', 'input')], 'nowhere'), FLAT)).toContain("output 'nowhere' is not a node of this genome");
  });

  it('a duplicate id', () => {
    expect(issuesOf(genome([dense('a', 'input'), dense('a', 'input')]), FLAT)).toContain("node 'a': duplicate node id");
  });

  it("a node named 'input'", () => {
    expect(issuesOf(genome([dense('input', 'input')]), FLAT)).toContain("'input' is reserved");
  });

  it('the same input listed twice', () => {
    expect(issuesOf(genome([dense('a', 'input'), { id: 's', kind: 'add', inputs: ['a', 'a'] }]), FLAT)).toContain('the same input is listed twice');
  });

  it('a node that does not lead to the output', () => {
    expect(issuesOf(genome([dense('a', 'input'), dense('b', 'input')], 'b'), FLAT)).toContain("node 'a': node does not lead to the output");
  });

  it('a shape mismatch at add', () => {
    // conv1 makes [16, 16, 8]; the input is [16, 16, 1].
    const g = genome([conv('c1', 'input'), { id: 'sum', kind: 'add', inputs: ['c1', 'input'] }]);
    expect(issuesOf(g)).toContain("node 'sum': add needs inputs of one shape but gets [16, 16, 8] and [16, 16, 1]");
  });

  it('a shape mismatch at concat (unequal height and width)', () => {
    const g = genome([
      { id: 'p', kind: 'max-pool2d', inputs: ['input'], poolSize: 2, strides: 2 },
      { id: 'cat', kind: 'concat', inputs: ['p', 'input'] },
    ]);
    expect(issuesOf(g)).toContain("node 'cat': concat needs inputs equal in all but the last axis");
  });

  it('dense on a spatial tensor', () => {
    expect(issuesOf(genome([dense('d', 'input')]))).toContain("node 'd': dense needs a flat input but gets [16, 16, 1]");
  });

  it('dense on a spatial tensor with consumers after it: reported, not thrown', () => {
    // Regression: a failed node used to leave no shape, and its consumer then threw a TypeError.
    const g = genome([dense('d', 'input'), { id: 'drop', kind: 'dropout', inputs: ['d'], rate: 0.1 }, dense('d2', 'drop')]);
    expect(issuesOf(g)).toContain("node 'd': dense needs a flat input");
  });

  it('conv on a flat tensor inside an image genome', () => {
    const g = genome([{ id: 'f', kind: 'flatten', inputs: ['input'] }, conv('c', 'f')]);
    expect(issuesOf(g)).toContain("node 'c': conv2d needs a spatial input (height × width × channels) but gets [256]");
  });

  it('conv on a flat dataset', () => {
    expect(issuesOf(genome([conv('c', 'input')]), FLAT)).toContain('this dataset has flat samples, so spatial layers (conv, pool, flatten) cannot be used');
  });

  it('a valid-padding kernel larger than its input', () => {
    const g = genome([conv('c', 'input', 8, { kernelSize: 5, padding: 'valid' })]);
    expect(issuesOf(g, { inputShape: [4, 4, 1], numClasses: 2 })).toContain("node 'c': kernel 5 with 'valid' padding does not fit a 4×4 input");
  });

  it('a pool larger than its input', () => {
    const g = genome([
      { id: 'p1', kind: 'max-pool2d', inputs: ['input'], poolSize: 2, strides: 2 },
      { id: 'p2', kind: 'avg-pool2d', inputs: ['p1'], poolSize: 2, strides: 2 },
    ]);
    expect(issuesOf(g, { inputShape: [3, 3, 1], numClasses: 2 })).toContain("node 'p2': pool 2 does not fit a 1×1 input");
  });

  it('the parameter cap exceeded', () => {
    // conv 3×3×64 keeps 16×16, flatten gives 16384 features, dense 256 on them holds 16384·256 + 256 ≈ 4.2M
    // weights, far above the 250k cap, while FLOPs (about 8.7M) stay under the 20M cap.
    const g = genome([conv('c', 'input', 64), { id: 'f', kind: 'flatten', inputs: ['c'] }, dense('d', 'f', 256)]);
    const text = issuesOf(g);
    expect(text).toMatch(/^\d+ parameters, above the cap of 250000/);
    expect(text).not.toContain('FLOPs');
  });

  it('the FLOP cap exceeded', () => {
    // conv 5×5×64 on a 16×16×64 tensor: 2·(5·5·64)·(16·16·64) ≈ 52M FLOPs, above the 20M cap, with
    // about 169k parameters, under the 250k cap.
    const g = genome([conv('c1', 'input', 64), conv('c2', 'c1', 64, { kernelSize: 5 })]);
    const text = issuesOf(g);
    expect(text).toMatch(/^\d+ FLOPs per sample, above the cap of 20000000/);
    expect(text).not.toContain('parameters');
  });

  it('a node kind the space does not allow', () => {
    const g = genome([{ id: 'dw', kind: 'depthwise-conv2d', inputs: ['input'], kernelSize: 3, strides: 1, padding: 'same', depthMultiplier: 1, activation: 'relu' }]);
    expect(issuesOf(g)).toContain("node 'dw': layer kind 'depthwise-conv2d' is not allowed in this search space");
  });

  it('more nodes than the space allows', () => {
    const space = { ...defaultSearchSpace(), maxNodes: 1 };
    expect(issuesOf(genome([dense('a', 'input'), dense('b', 'a')]), FLAT, space)).toContain('2 nodes, more than the search space\'s 1');
  });

  const outOfRange: [string, Genome, DataShape, string, SearchSpace?][] = [
    ['units', genome([dense('d', 'input', 512)]), FLAT, "node 'd': units 512 outside [8, 256]"],
    ['filters', genome([conv('c', 'input', 2)]), IMAGE, "node 'c': filters 2 outside [4, 64]"],
    ['kernel size', genome([conv('c', 'input', 8, { kernelSize: 7 })]), IMAGE, "node 'c': kernel size 7 not in [1, 3, 5]"],
    ['stride', genome([conv('c', 'input', 8, { strides: 3 })]), IMAGE, "node 'c': stride 3 not in [1, 2]"],
    ['pool size', genome([{ id: 'p', kind: 'max-pool2d', inputs: ['input'], poolSize: 3, strides: 2 }]), IMAGE, "node 'p': pool size 3 not in [2]"],
    ['dropout rate', genome([{ id: 'x', kind: 'dropout', inputs: ['input'], rate: 0.8 }]), FLAT, "node 'x': dropout rate 0.8 outside [0, 0.5]"],
    ['activation', genome([{ id: 'a', kind: 'activation', inputs: ['input'], activation: 'sigmoid' }]), FLAT, "node 'a': activation 'sigmoid' is not allowed"],
    ['learning rate', genome([], 'input', { learningRate: 0.5 }), FLAT, 'learning rate 0.5 outside [0.0001, 0.01]'],
    ['batch size', genome([], 'input', { batchSize: 48 }), FLAT, 'batch size 48 not in [16, 32, 64, 128]'],
    ['weight decay', genome([], 'input', { weightDecay: 0.01 }), FLAT, 'weight decay 0.01 outside [0, 0.001]'],
    ['epochs', genome([], 'input', { epochs: 50 }), FLAT, 'epochs 50 outside [1, 20]'],
    ['optimizer', genome([], 'input', {}), FLAT, "optimizer 'adam' is not allowed", { ...defaultSearchSpace(), optimizers: ['sgd'] }],
  ];
  const recipe: [string, Partial<Genome['training']>, DataShape, string, SearchSpace?][] = [
    ['schedule not in the space', { schedule: { kind: 'step', factor: 0.1, atFractions: [0.5], warmupEpochs: 0 } }, FLAT, "learning-rate schedule 'step' is not allowed", { ...defaultSearchSpace(), schedules: ['cosine'] }],
    ['schedule in a space from before schedules', { schedule: { kind: 'cosine', minFactor: 0, warmupEpochs: 0 } }, FLAT, "learning-rate schedule 'cosine' is not allowed (the space allows constant)", { ...defaultSearchSpace(), schedules: undefined }],
    ['step fractions out of order', { schedule: { kind: 'step', factor: 0.1, atFractions: [0.75, 0.5], warmupEpochs: 0 } }, FLAT, 'step schedule atFractions must be ascending'],
    ['augmentation of flat samples', { augment: { shift: 1, flip: false } }, FLAT, 'augment needs images (height × width × channels); this dataset has flat samples, so drop the augment gene'],
    ['a shift outside the range', { augment: { shift: 4, flip: false } }, IMAGE, 'augment shift 4 outside [0, 2]'],
    ['a flip the run file did not allow', { augment: { shift: 0, flip: true } }, IMAGE, 'augment.flip mirrors images, but the run file does not say mirroring keeps the label: set searchSpace.flips to true, or drop the flip'],
    ['label smoothing outside the range', { labelSmoothing: 0.3 }, FLAT, 'label smoothing 0.3 outside [0, 0.1]'],
    ['patience outside the range', { patience: 9 }, FLAT, 'patience 9 outside [2, 5]'],
  ];
  it.each(recipe)('a recipe gene: %s', (_name, training, data, expected, space = defaultSearchSpace()) => {
    expect(issuesOf(genome([], 'input', training), data, space)).toContain(expected);
  });

  it('allows a flip once the run file says mirroring keeps the label, and refuses flips on flat data at the run level', () => {
    expect(checkGenome(genome([], 'input', { augment: { shift: 1, flip: true } }), { ...defaultSearchSpace(), flips: true }, IMAGE).ok).toBe(true);
    expect(spaceIssuesForData({ ...defaultSearchSpace(), flips: true }, FLAT)).toEqual([expect.stringMatching(/^searchSpace\.flips .*no width axis.*: remove searchSpace\.flips$/)]);
    expect(spaceIssuesForData({ ...defaultSearchSpace(), flips: true }, IMAGE)).toEqual([]);
  });

  it.each(outOfRange)('an out-of-range %s', (_name, g, data, expected, space = defaultSearchSpace()) => {
    expect(issuesOf(g, data, space)).toContain(expected);
  });

  it('schema errors: a wrong type, a missing field, an extra field', () => {
    expect(issuesOf({ ...genome([]), training: { ...TRAINING, batchSize: 'big' } })).toContain('/training/batchSize Expected integer');
    expect(issuesOf({ schemaVersion: 1, nodes: [], output: 'input' })).toContain('/training Expected required property');
    expect(issuesOf({ ...genome([]), colour: 'blue' })).toContain('/colour Unexpected property');
    expect(issuesOf({ ...genome([]), schemaVersion: 2 })).toContain('/schemaVersion');
    expect(issuesOf({ ...genome([]), nodes: [{ ...dense('d', 'input'), units: '64' }] })).toMatch(/^\/nodes\/0 /);
    expect(issuesOf({ ...genome([]), nodes: [dense('9lives', 'input')], output: '9lives' })).toMatch(/^\/nodes\/0 /);
    expect(issuesOf(null)).toMatch(/Expected object/);
  });

  it('reports every problem at once, not only the first', () => {
    const g = genome([dense('d', 'input', 512)], 'd', { learningRate: 0.5, epochs: 50 });
    const result = checkGenome(g, defaultSearchSpace(), FLAT);
    expect(result.ok).toBe(false);
    if (!result.ok) expect(result.issues).toHaveLength(3);
  });
});
