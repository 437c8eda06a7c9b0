import { describe, expect, it } from 'vitest';
import { analyzeGenome, type DataShape } from './analyze.js';
import { genomeHash } from './canonical.js';
import { defaultSearchSpace, defaultSequenceSearchSpace, type SearchSpace } from './search-space-schema.js';
import { checkGenome } from './validate.js';
import { fitReferenceNetwork, REFERENCE_RECIPES, referenceGenome } from './reference-networks.js';

const MNIST: DataShape = { inputShape: [28, 28, 1], numClasses: 10 };
const TILES: DataShape = { inputShape: [16, 16, 1], numClasses: 4 };
const TABLE: DataShape = { inputShape: [12], numClasses: 3 };
const space = (over: Partial<SearchSpace> = {}): SearchSpace => ({ ...defaultSearchSpace(), ...over });
const kinds = (d: DataShape, s: SearchSpace) => {
  const fit = fitReferenceNetwork(d, s);
  if (!fit.ok) throw new Error(fit.reason);
  return { fit, kinds: analyzeGenome(fit.genome, d).ok ? fit.genome.nodes.map((n) => n.kind) : [] };
};

describe('referenceGenome', () => {
  it('for images is the hand-made conv net with its recipe', () => {
    const g = referenceGenome(MNIST);
    expect(g.nodes.map((n) => n.kind)).toEqual([
      'conv2d', 'batch-norm', 'activation', 'max-pool2d', 'conv2d', 'batch-norm', 'activation', 'max-pool2d', 'dropout', 'flatten',
    ]);
    expect(g.nodes.filter((n) => n.kind === 'conv2d').map((n) => n.kind === 'conv2d' && [n.filters, n.kernelSize, n.activation])).toEqual([
      [16, 3, 'linear'],
      [32, 3, 'linear'],
    ]);
    expect(g.training).toEqual(REFERENCE_RECIPES.image);
    expect(g.training).toMatchObject({ optimizer: 'adam', learningRate: 0.001, batchSize: 64, weightDecay: 0 });
    // Hand count: conv 1·9·16+16 = 160, bn 4·16 = 64, conv 16·9·32+32 = 4,640, bn 4·32 = 128, head 7·7·32·10+10 = 15,690.
    const a = analyzeGenome(g, MNIST);
    expect(a.ok && a.analysis.params).toBe(160 + 64 + 4640 + 128 + 15_690);
  });

  it('for flat data is the two-layer dense net with its recipe', () => {
    const g = referenceGenome(TABLE);
    expect(g.nodes.map((n) => (n.kind === 'dense' ? `dense ${n.units} ${n.activation}` : n.kind === 'dropout' ? `dropout ${n.rate}` : n.kind))).toEqual([
      'dense 128 relu', 'dropout 0.2', 'dense 64 relu', 'dropout 0.2',
    ]);
    expect(g.training).toMatchObject({ optimizer: 'adam', learningRate: 0.001, batchSize: 32, weightDecay: 0 });
  });
});

describe('fitReferenceNetwork', () => {
  it.each([['MNIST-sized images', MNIST], ['the demo tiles', TILES], ['a table', TABLE]] as const)(
    'in the default space keeps %s reference as written',
    (_name, data) => {
      const fit = fitReferenceNetwork(data, defaultSearchSpace());
      expect(fit.ok && fit.adjustments).toEqual([]);
      expect(fit.ok && genomeHash(fit.genome)).toBe(genomeHash(referenceGenome(data)));
    },
  );

  it('halves the widths together until the parameter cap holds, never below the space minimum', () => {
    // Widths 16/32 give 20,682 parameters on MNIST; 8/16 give 1·9·8+8 + 32 + 8·9·16+16 + 64 + 784·10+10 = 9,338.
    const { fit } = kinds(MNIST, space({ maxParams: 10_000 }));
    expect(fit.genome.nodes.filter((n) => n.kind === 'conv2d').map((n) => n.kind === 'conv2d' && n.filters)).toEqual([8, 16]);
    expect(fit.adjustments.join('\n')).toMatch(/widths 16\/32 → 8\/16/);
    expect(checkGenome(fit.genome, space({ maxParams: 10_000 }), MNIST).ok).toBe(true);
    const flat = fitReferenceNetwork(TABLE, space({ maxParams: 3_000, units: { min: 8, max: 256 } }));
    expect(flat.ok && flat.genome.nodes.filter((n) => n.kind === 'dense').map((n) => n.kind === 'dense' && n.units)).toEqual([32, 16]);
  });

  it('drops parts of a kind the space forbids and moves training genes into its ranges', () => {
    const s = space({ allowedKinds: ['conv2d', 'max-pool2d', 'dense'], batchSizes: [16, 32], learningRate: { min: 0.002, max: 0.01 } });
    const { fit, kinds: k } = kinds(MNIST, s);
    expect(k).toEqual(['conv2d', 'max-pool2d', 'conv2d', 'max-pool2d']);
    expect(fit.genome.nodes.every((n) => n.kind !== 'conv2d' || n.activation === 'relu')).toBe(true);
    expect(fit.genome.training).toMatchObject({ batchSize: 32, learningRate: 0.002 });
    expect(fit.adjustments.length).toBeGreaterThanOrEqual(3);
    expect(checkGenome(fit.genome, s, MNIST).ok).toBe(true);
  });

  it('leaves out optional layers when the space allows fewer nodes', () => {
    const s = space({ maxNodes: 7 });
    const { kinds: k } = kinds(MNIST, s);
    expect(k).toEqual(['conv2d', 'activation', 'max-pool2d', 'conv2d', 'activation', 'max-pool2d']);
  });

  it('says why when it cannot fit: a required kind forbidden, or a cap the narrowest widths still break', () => {
    const noConv = fitReferenceNetwork(MNIST, space({ allowedKinds: ['dense', 'dropout'] }));
    expect(noConv.ok || noConv.reason).toMatch(/does not allow 'conv2d'/);
    const tiny = fitReferenceNetwork(MNIST, space({ maxParams: 2_000, filters: { min: 16, max: 64 } }));
    expect(tiny.ok || tiny.reason).toMatch(/narrowest widths \(16\/16/);
  });
});

describe('the reference network for sequences (time steps × channels)', () => {
  const SENSOR: DataShape = { inputShape: [40, 3], numClasses: 4 };
  const sequenceSpace = (over: Partial<SearchSpace> = {}): SearchSpace => ({ ...defaultSequenceSearchSpace(), ...over });

  it('is the small 1-D conv net: conv1d + batch-norm + relu twice, a pool, a global average pool over time', () => {
    const g = referenceGenome(SENSOR);
    expect(g.nodes.map((n) => n.kind)).toEqual(['conv1d', 'batch-norm', 'activation', 'max-pool1d', 'conv1d', 'batch-norm', 'activation', 'global-avg-pool']);
    expect(g.training).toEqual(REFERENCE_RECIPES.sequence);
    // Hand count: conv 3·3·32+32 = 320, bn 4·32 = 128, conv 3·32·64+64 = 6,208, bn 4·64 = 256, head 64·4+4 = 260.
    const a = analyzeGenome(g, SENSOR);
    expect(a.ok && a.analysis.params).toBe(320 + 128 + 6208 + 256 + 260);
    const fit = fitReferenceNetwork(SENSOR, sequenceSpace());
    expect(fit.ok && [genomeHash(fit.genome), fit.adjustments]).toEqual([genomeHash(g), []]);
    expect(checkGenome(g, sequenceSpace(), SENSOR).ok).toBe(true);
  });

  it('fits a space without kernel 3, batch-norm or activation layers, and fails without conv1d', () => {
    const { fit, kinds: k } = kinds(SENSOR, sequenceSpace({ kernelSizes: [5, 7], allowedKinds: ['conv1d', 'max-pool1d', 'global-avg-pool', 'dense'] }));
    expect(k).toEqual(['conv1d', 'max-pool1d', 'conv1d', 'global-avg-pool']);
    expect(fit.genome.nodes.map((n) => n.kind === 'conv1d' && [n.kernelSize, n.activation])).toEqual([[5, 'relu'], false, [5, 'relu'], false]);
    expect(fit.adjustments).toContain('kernel size 3 is not allowed: 5 instead');
    const refused = fitReferenceNetwork(SENSOR, space());
    expect(refused.ok).toBe(false);
    expect(!refused.ok && refused.reason).toBe("the search space does not allow 'conv1d' layers");
  });
});
