import { beforeAll, describe, expect, it } from 'vitest';
import { decodeCheckpoint, encodeCheckpoint, type DataShape, type Genome, type OptimizerName } from '@netbreeder/shared-types';
import { initBackend } from './backend.js';
import { chainGenome, refSkipBn } from './reference-genomes.js';
import { syntheticSamples } from './synthetic-samples.js';
import { trainGenome, type TrainOutcome, type TrainRequest } from './train-genome.js';

const IMAGE: DataShape = { inputShape: [8, 8, 1], numClasses: 4 };
const train = syntheticSamples(IMAGE, 192, 3);
const val = syntheticSamples(IMAGE, 96, 4);
/** Conv, pooling, dropout (seeded masks) and batch normalization (moving statistics): every kind of state a checkpoint must carry. */
const net = (optimizer: OptimizerName, recipe: Partial<Genome['training']> = {}): Genome =>
  chainGenome(
    [
      { id: 'c1', kind: 'conv2d', filters: 4, kernelSize: 3, strides: 1, padding: 'same', activation: 'relu' },
      { id: 'bn', kind: 'batch-norm' },
      { id: 'p1', kind: 'max-pool2d', poolSize: 2, strides: 2 },
      { id: 'drop', kind: 'dropout', rate: 0.3 },
    ],
    { batchSize: 32, learningRate: 0.01, optimizer, ...recipe },
  );
const request = (genome: Genome, extra: Partial<TrainRequest> = {}): TrainRequest => ({
  genome,
  data: IMAGE,
  train,
  val,
  budget: { epochs: 4, maxSeconds: 60 },
  seed: 21,
  checkpoints: { everyEpochs: 1, final: true, runId: 'r1', evaluationId: 'r1-s0-a1' },
  ...extra,
});

/** Trains uninterrupted, keeping every checkpoint it hands out. */
async function trainKeeping(genome: Genome): Promise<{ outcome: TrainOutcome; checkpoints: Map<number, Uint8Array> }> {
  const checkpoints = new Map<number, Uint8Array>();
  const outcome = await trainGenome(request(genome, { onCheckpoint: (bytes, epoch) => void checkpoints.set(epoch, bytes) }));
  return { outcome, checkpoints };
}

beforeAll(async () => {
  expect((await initBackend()).backend).toBe('wasm');
});

describe('training checkpoints', () => {
  // Same genome, seed, data and backend: the resumed training runs the same kernels on the same
  // values in the same order, so its scores must be bit-identical (tolerance 0), not merely close.
  for (const optimizer of ['adam', 'sgd', 'rmsprop'] as const) {
    it(`a training resumed from its epoch-2 checkpoint ends exactly as the uninterrupted one (${optimizer})`, async () => {
      const genome = net(optimizer);
      const { outcome: whole, checkpoints } = await trainKeeping(genome);
      expect([...checkpoints.keys()]).toEqual([1, 2, 3, 4]);
      const resumed = await trainGenome(request(genome, { start: { kind: 'resumed', bytes: checkpoints.get(2)!, sha256: 'a'.repeat(64), fromEvaluationId: 'r1-s0-a1' } }));
      expect(resumed.start).toMatchObject({ kind: 'resumed', fromEpoch: 2, copiedWeights: resumed.start!.totalWeights, note: null });
      expect(resumed.history.map((h) => h.epoch)).toEqual([1, 2, 3, 4]);
      expect(resumed.valLoss).toBe(whole.valLoss);
      expect(resumed.valAccuracy).toBe(whole.valAccuracy);
      expect(resumed.trainLoss).toBe(whole.trainLoss);
      expect(resumed.samplesSeen).toBe(whole.samplesSeen);
    });
  }

  it('a training with a cosine schedule, shifts, flips and label smoothing resumes exactly where it was', async () => {
    const genome = net('sgd', { schedule: { kind: 'cosine', minFactor: 0.1, warmupEpochs: 1 }, augment: { shift: 2, flip: true }, labelSmoothing: 0.1 });
    const { outcome: whole, checkpoints } = await trainKeeping(genome);
    const resumed = await trainGenome(request(genome, { start: { kind: 'resumed', bytes: checkpoints.get(3)!, sha256: 'a'.repeat(64), fromEvaluationId: 'r1-s0-a1' } }));
    expect(resumed.start).toMatchObject({ kind: 'resumed', fromEpoch: 3 });
    expect(resumed.valLoss).toBe(whole.valLoss);
    expect(resumed.trainLoss).toBe(whole.trainLoss);
    // and the recipe changed the training: the same genome without it ends elsewhere
    const plain = await trainGenome(request(net('sgd')));
    expect(plain.trainLoss).not.toBe(whole.trainLoss);
  });

  it('a resumed training keeps the sample budget of the whole training', async () => {
    const genome = net('adam');
    const budget = { epochs: 6, maxSeconds: 60, maxSamples: train.count * 3 + 50 };
    const checkpoints = new Map<number, Uint8Array>();
    const whole = await trainGenome(request(genome, { budget, onCheckpoint: (bytes, epoch) => void checkpoints.set(epoch, bytes) }));
    expect(whole.stoppedBy).toBe('samples');
    const resumed = await trainGenome(request(genome, { budget, start: { kind: 'resumed', bytes: checkpoints.get(2)!, sha256: 'a'.repeat(64), fromEvaluationId: 'r1-s0-a1' } }));
    expect(resumed.samplesSeen).toBe(budget.maxSamples);
    expect(resumed.stoppedBy).toBe('samples');
    expect(resumed.valLoss).toBe(whole.valLoss);
  });

  it('starts cleanly from epoch 0, saying why, when the offered checkpoint is corrupt, missing or of another genome', async () => {
    const genome = net('adam');
    const { outcome: whole, checkpoints } = await trainKeeping(genome);
    const good = checkpoints.get(2)!;
    const flipped = good.slice();
    flipped[20] = flipped[20]! ^ 0xff; // inside the JSON header
    const cases = [
      { bytes: flipped, note: /checkpoint header is not JSON|checkpoint header is invalid/ },
      { bytes: good.subarray(0, good.length - 8), note: /checkpoint has \d+ bytes, its header describes \d+/ },
      { bytes: null, note: /failed its sha256/ },
    ];
    for (const c of cases) {
      const r = await trainGenome(request(genome, { start: { kind: 'resumed', bytes: c.bytes, sha256: 'b'.repeat(64), fromEvaluationId: 'r1-s0-a1', note: 'download failed its sha256 check' } }));
      expect(r.start!.kind).toBe('fresh');
      expect(r.start!.note).toMatch(c.note);
      expect(r.valLoss).toBe(whole.valLoss); // a clean restart is the uninterrupted training itself
    }
    const other = await trainGenome(request(net('sgd'), { start: { kind: 'resumed', bytes: good, sha256: 'c'.repeat(64), fromEvaluationId: 'r1-s0-a1' } }));
    expect(other.start!.kind).toBe('fresh');
    expect(other.start!.note).toMatch(/belongs to genome/);
  });

  it('a promoted candidate continues from its own lower-rung checkpoint and trains only the extra epochs', async () => {
    const genome = net('adam');
    const { outcome: whole, checkpoints } = await trainKeeping(genome);
    const epochs: number[] = [];
    // A different evaluation (another seed): its state comes from the checkpoint, not from its own seed.
    const r = await trainGenome(request(genome, { seed: 99, onEpoch: (e) => epochs.push(e.epoch), start: { kind: 'own-checkpoint', bytes: checkpoints.get(1)!, sha256: 'd'.repeat(64), fromEvaluationId: 'r1-s0-a1' } }));
    expect(epochs).toEqual([2, 3, 4]);
    expect(r.start).toMatchObject({ kind: 'own-checkpoint', fromEpoch: 1 });
    expect(r.valLoss).toBe(whole.valLoss);
  });

  it('a child takes its parent weights where layer names and shapes match', async () => {
    const parent = net('adam');
    const { checkpoints } = await trainKeeping(parent);
    // The child widens c1 (4 → 6 filters): c1's kernel and bias and the batch norm's four weights
    // change shape; the head's dense kernel keeps its shape (pooling output 4×4×6 ≠ 4×4×4, so no).
    const child = structuredClone(parent);
    (child.nodes[0] as { filters: number }).filters = 6;
    const r = await trainGenome(request(child, { start: { kind: 'parent-weights', bytes: checkpoints.get(4)!, sha256: 'e'.repeat(64), fromEvaluationId: 'r1-s0-a1' } }));
    expect(r.start).toMatchObject({ kind: 'parent-weights', fromEpoch: 0 });
    // weights: c1 kernel+bias, bn gamma+beta+moving mean+variance, head kernel+bias = 8; only the head bias [4] keeps its shape
    expect(r.start!.totalWeights).toBe(8);
    expect(r.start!.copiedWeights).toBe(1);
    const same = await trainGenome(request(parent, { start: { kind: 'parent-weights', bytes: checkpoints.get(4)!, sha256: 'e'.repeat(64), fromEvaluationId: 'r1-s0-a1' } }));
    expect(same.start!.copiedWeights).toBe(8);
    const skip = await trainGenome(request(refSkipBn(), { start: { kind: 'parent-weights', bytes: checkpoints.get(4)!, sha256: 'e'.repeat(64), fromEvaluationId: 'r1-s0-a1' } }));
    expect(skip.start!.kind).toBe('parent-weights');
  });
});

describe('checkpoint format', () => {
  const header = {
    runId: 'r1', evaluationId: 'r1-s3-a2', genomeHash: 'f'.repeat(64), seed: 7, epoch: 3, final: false, backend: 'wasm' as const, optimizer: 'adam' as const,
    rng: { shuffle: [1, 2, 3, 4] as [number, number, number, number], dropout: [{ layer: 'drop', state: [5, 6, 7, 4294967295] as [number, number, number, number] }] },
    samplesSeen: 300, stepSeconds: 1.5, history: [],
  };
  it('round-trips header and arrays, whatever the byte offset of the input', () => {
    const arrays = [
      { group: 'weight' as const, name: 'c1/kernel', shape: [3, 3, 1, 2], values: Float32Array.from({ length: 18 }, (_, i) => i / 7) },
      { group: 'optimizer' as const, name: 'iter', shape: [], values: Int32Array.of(42) },
      { group: 'order' as const, name: 'order', shape: [5], values: Int32Array.of(4, 0, 3, 1, 2) },
    ];
    const bytes = encodeCheckpoint(header, arrays);
    expect(String.fromCharCode(...bytes.subarray(0, 4))).toBe('NBC1');
    const shifted = new Uint8Array(bytes.length + 1);
    shifted.set(bytes, 1);
    const decoded = decodeCheckpoint(shifted.subarray(1));
    expect(decoded.header).toMatchObject({ ...header, formatVersion: 1 });
    expect(decoded.header.tensors.map((t) => [t.name, t.dtype, t.offset])).toEqual([['c1/kernel', 'float32', 0], ['iter', 'int32', 72], ['order', 'int32', 76]]);
    expect(decoded.arrays.map((a) => Array.from(a.values))).toEqual(arrays.map((a) => Array.from(a.values)));
  });
  it('refuses a wrong magic, a newer version, a bad header and a length that does not add up', () => {
    const bytes = encodeCheckpoint(header, [{ group: 'weight', name: 'w', shape: [2], values: Float32Array.of(1, 2) }]);
    const bad = (edit: (b: Uint8Array) => Uint8Array) => () => decodeCheckpoint(edit(bytes.slice()));
    expect(bad((b) => ((b[0] = 0), b))).toThrow(/bad magic/);
    expect(bad((b) => ((b[4] = 2), b))).toThrow(/format version 2/);
    expect(bad((b) => b.subarray(0, b.length - 4))).toThrow(/its header describes/);
    const wrongEpoch = encodeCheckpoint(header, []);
    const text = new TextDecoder().decode(wrongEpoch).replace('"epoch":3', '"epoch":0');
    expect(() => decodeCheckpoint(new TextEncoder().encode(text))).toThrow(/checkpoint header is invalid: \/epoch/);
    expect(() => encodeCheckpoint(header, [{ group: 'weight', name: 'w', shape: [3], values: Float32Array.of(1, 2) }])).toThrow(/2 values for shape \[3\]/);
  });
});
