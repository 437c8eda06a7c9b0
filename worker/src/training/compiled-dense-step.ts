import * as tf from '@tensorflow/tfjs';
import { expandMotifs, INPUT_ID, sampleSize, topologicalOrder, type Activation, type DataShape, type Genome } from '@netbreeder/shared-types';
import { HEAD_DENSE_NAME } from './build-model.js';
import type { SeededDropout } from './seeded-dropout.js';
import { heapOffset, nativeKernels, type NativeKernels } from './kernels/native-kernels.js';
import type { HeapBackend } from './kernels/wasm-op-runner.js';
import { activate, addBiasAndActivate, backActivate, crossEntropyAndGradient, f, NEEDS_INPUT, regressionLossAndGradient, softmaxRow } from './compiled-step-math.js';

/** Whether {@link CompiledDenseStep.plan} may plan a step (off: every genome takes the tape); for the benchmark's comparisons and tests. */
export const compiledStepOptions = { enabled: true };

/** A layer's output as it lives on the wasm heap for the whole training: [maxBatch, width], and its gradient (none for the network's input). */
interface Slot {
  width: number;
  value: tf.Tensor;
  grad: tf.Tensor | null;
}

/** The training loss: cross-entropy over the softmax head, or a regression target's squared error or Huber loss. */
type Objective = 'cross-entropy' | 'squared' | 'huber';

type Stage =
  | {
      kind: 'dense';
      kernel: tf.LayerVariable;
      bias: tf.LayerVariable;
      activation: Activation | 'softmax';
      input: Slot;
      output: Slot;
      /** The pre-activations x·W + b, kept for the activations in {@link NEEDS_INPUT}. */
      pre: tf.Tensor | null;
      dKernel: tf.Tensor;
      dBias: tf.Tensor;
    }
  | { kind: 'dropout'; layer: SeededDropout; input: Slot; output: Slot; multiplier: Float32Array }
  | { kind: 'activation'; activation: Activation; input: Slot; output: Slot };

/**
 * A training step for a chain of dense layers (with flatten, dropout and activation layers between
 * them, and the softmax or regression head) planned once per training: the forward pass, the
 * cross-entropy loss and every weight's gradient are computed straight on the wasm heap by our
 * WebAssembly matrix products (`worker/native/matmul.c`, `leading-sum.c`) and short JavaScript
 * loops, into buffers that live as long as the training, without the layers library, the engine's
 * per-kernel bookkeeping or the autodiff tape. The optimizer then applies the gradients as after
 * the tape (`applyGradients`), so its state, checkpoints and schedule are untouched. The
 * arithmetic is the tape's: same products, the same float32 roundings in the element-wise steps,
 * dropout masks from the same seeded sequence as {@link SeededDropout} draws, the weight decay's
 * gradient as the library's L2 regularizer gives it (compiled-dense-step.test.ts checks whole
 * trainings against the tape within 1e-4).
 */
export class CompiledDenseStep {
  private constructor(
    private readonly backend: HeapBackend,
    private readonly kernels: NativeKernels,
    private readonly input: Slot,
    private readonly stages: Stage[],
    private readonly objective: Objective,
    private readonly weightDecay: number,
    private readonly scratch: tf.Tensor,
    private readonly owned: tf.Tensor[],
  ) {}

  /**
   * The compiled step of `model` (built from `genome` by buildModel) for batches of up to
   * `maxBatch` samples, or null where it does not apply: another backend than wasm, our kernels
   * not loadable, or a genome that is not such a chain (convolutions, pools,
   * batch norm, branches, recurrent layers), which keep the tape.
   */
  static plan(model: tf.LayersModel, genome: Genome, data: DataShape, maxBatch: number): CompiledDenseStep | null {
    if (!compiledStepOptions.enabled || tf.getBackend() !== 'wasm') return null;
    const kernels = nativeKernels(tf.backend());
    if (!kernels) return null;
    const layers = expandMotifs(genome).genome;
    const topo = topologicalOrder(layers);
    if (!topo.ok) return null;
    // A chain: each node reads the one before it, and the last one feeds the head.
    let previous = INPUT_ID;
    let flat = data.inputShape.length === 1;
    const chain: Array<{ kind: 'dense' | 'dropout' | 'activation'; id: string; activation?: Activation }> = [];
    for (const n of topo.order) {
      if (n.inputs.length !== 1 || n.inputs[0] !== previous) return null;
      previous = n.id;
      if (n.kind === 'flatten') flat = true;
      else if (n.kind === 'dense' && flat) chain.push({ kind: 'dense', id: n.id, activation: n.activation });
      else if (n.kind === 'dropout') chain.push({ kind: 'dropout', id: n.id });
      else if (n.kind === 'activation') chain.push({ kind: 'activation', id: n.id, activation: n.activation });
      else return null;
    }
    if (previous !== layers.output) return null;

    const owned: tf.Tensor[] = [];
    const buffer = (shape: number[]) => {
      const t = tf.zeros(shape);
      owned.push(t);
      return t;
    };
    const slot = (width: number): Slot => ({ width, value: buffer([maxBatch, width]), grad: buffer([maxBatch, width]) });
    const input: Slot = { width: sampleSize(data.inputShape), value: buffer([maxBatch, sampleSize(data.inputShape)]), grad: null };
    const stages: Stage[] = [];
    const denseStage = (layer: tf.layers.Layer, activation: Activation | 'softmax', from: Slot): Stage => {
      const [kernel, bias] = layer.trainableWeights as [tf.LayerVariable, tf.LayerVariable];
      const [k, n] = kernel.shape as [number, number];
      const pre = activation !== 'softmax' && NEEDS_INPUT.has(activation) ? buffer([maxBatch, n]) : null;
      return { kind: 'dense', kernel, bias, activation, input: from, output: slot(n), pre, dKernel: buffer([k, n]), dBias: buffer([n]) };
    };
    let current = input;
    for (const c of chain) {
      const layer = model.getLayer(c.id);
      let stage: Stage;
      if (c.kind === 'dense') stage = denseStage(layer, c.activation!, current);
      else if (c.kind === 'dropout') stage = { kind: 'dropout', layer: layer as SeededDropout, input: current, output: slot(current.width), multiplier: new Float32Array(maxBatch * current.width) };
      else stage = { kind: 'activation', activation: c.activation!, input: current, output: slot(current.width) };
      stages.push(stage);
      current = stage.output;
    }
    const head = denseStage(model.getLayer(HEAD_DENSE_NAME), data.target ? 'linear' : 'softmax', current);
    stages.push(head);
    const widest = Math.max(...stages.map((s) => s.output.width));
    const scratch = buffer([2 * widest]); // float64 accumulators of the bias gradients' sums
    const objective: Objective = !data.target ? 'cross-entropy' : data.target.loss === 'huber' ? 'huber' : 'squared';
    return new CompiledDenseStep(tf.backend() as unknown as HeapBackend, kernels, input, stages, objective, genome.training.weightDecay, scratch, owned);
  }

  /**
   * Trains one batch of `size` samples (`features` [size, inputs]; `targets` [size, classes], the
   * one-hot or smoothed labels, or for a regression target [size], the standardised targets;
   * `labels` the class indices) with `optimizer`. Returns the batch's mean loss (regularization
   * included, as the tape's loss) and its `tally`: the count of correct answers, or for a
   * regression target the sum of squared errors (what trainGenome's epoch totals add up).
   */
  step(features: Float32Array, targets: Float32Array, labels: Int32Array, size: number, optimizer: tf.Optimizer): { loss: number; tally: number } {
    for (const s of this.stages) if (s.kind === 'dropout') this.drawMask(s, size);
    const view = (t: tf.Tensor) => this.backend.typedArrayFromHeap(t) as Float32Array;
    const at = (t: tf.TensorInfo) => heapOffset(this.backend, t);
    view(this.input.value).set(features.subarray(0, size * this.input.width));
    for (const s of this.stages) this.forward(s, size, view, at);

    const head = this.stages[this.stages.length - 1]!.output;
    const out = view(head.value);
    const dz = view(head.grad!);
    const { loss, tally } = this.objective === 'cross-entropy' ? crossEntropyAndGradient(out, targets, labels, size, head.width, dz) : regressionLossAndGradient(this.objective, out, targets, size, dz);

    let penalty = 0;
    const firstDense = this.stages.findIndex((s) => s.kind === 'dense');
    for (let i = this.stages.length - 1; i >= firstDense; i--) penalty += this.backward(this.stages[i]!, size, i > firstDense, view, at);

    const gradients: Record<string, tf.Tensor> = {};
    for (const s of this.stages) {
      if (s.kind !== 'dense') continue;
      gradients[s.kernel.name] = s.dKernel;
      gradients[s.bias.name] = s.dBias;
    }
    optimizer.applyGradients(gradients);
    return { loss: loss + penalty, tally };
  }

  /** Frees every buffer; the model and the optimizer stay the caller's. */
  dispose(): void {
    tf.dispose(this.owned);
  }

  private drawMask(s: Extract<Stage, { kind: 'dropout' }>, size: number): void {
    const count = size * s.input.width;
    if (s.layer.rate === 0) s.multiplier.fill(1, 0, count);
    else s.layer.fillMask(s.multiplier, count);
  }

  private forward(s: Stage, size: number, view: (t: tf.Tensor) => Float32Array, at: (t: tf.TensorInfo) => number): void {
    const count = size * s.output.width;
    if (s.kind === 'dense') {
      const [k, n] = s.kernel.shape as [number, number];
      this.kernels.matmul_rows(at(s.input.value), at(s.kernel.read()), at(s.pre ?? s.output.value), size, k, n, k, 1);
      const y = view(s.output.value);
      const b = view(s.bias.read());
      if (s.activation === 'softmax') {
        for (let r = 0; r < size; r++) softmaxRow(y, r * n, n, b);
        return;
      }
      if (!s.pre) {
        addBiasAndActivate(y, b, size, n, s.activation);
        return;
      }
      // The pre-activations stay in their own buffer for the backward pass.
      const z = view(s.pre);
      addBiasAndActivate(z, b, size, n, 'linear');
      for (let i = 0; i < count; i++) y[i] = activate(s.activation, z[i]!);
      return;
    }
    const x = view(s.input.value);
    const y = view(s.output.value);
    if (s.kind === 'dropout') for (let i = 0; i < count; i++) y[i] = x[i]! * s.multiplier[i]!;
    else for (let i = 0; i < count; i++) y[i] = activate(s.activation, x[i]!);
  }

  /** One stage's gradients (its weights', and its input's when `inputGradient`); returns its weight decay's share of the loss. */
  private backward(s: Stage, size: number, inputGradient: boolean, view: (t: tf.Tensor) => Float32Array, at: (t: tf.TensorInfo) => number): number {
    const count = size * s.output.width;
    if (s.kind !== 'dense') {
      // Stages after the first dense layer only: their input is a layer's output, with a gradient.
      const g = view(s.output.grad!);
      const dx = view(s.input.grad!);
      if (s.kind === 'dropout') for (let i = 0; i < count; i++) dx[i] = g[i]! * s.multiplier[i]!;
      else {
        const x = view(s.input.value);
        const y = view(s.output.value);
        for (let i = 0; i < count; i++) dx[i] = backActivate(s.activation, x[i]!, y[i]!, g[i]!);
      }
      return 0;
    }
    const [k, n] = s.kernel.shape as [number, number];
    if (s.activation === 'relu') {
      const g = view(s.output.grad!);
      const y = view(s.output.value);
      for (let i = 0; i < count; i++) if (!(y[i]! > 0)) g[i] = 0;
    } else if (s.activation !== 'softmax' && s.activation !== 'linear') {
      const g = view(s.output.grad!);
      const y = view(s.output.value);
      const x = s.pre ? view(s.pre) : y;
      for (let i = 0; i < count; i++) g[i] = backActivate(s.activation, x[i]!, y[i]!, g[i]!);
    }
    const kernel = s.kernel.read();
    const dz = s.output.grad!;
    this.kernels.matmul_rows(at(s.input.value), at(dz), at(s.dKernel), k, size, n, 1, k);
    this.kernels.leading_sum(at(dz), at(s.dBias), at(this.scratch), size, n);
    if (inputGradient) this.kernels.matmul_dots(at(dz), at(kernel), at(s.input.grad!), size, n, k);
    if (this.weightDecay <= 0) return 0;
    // The L2 regularizer's term l2·Σw² and its gradient l2·(2w), added to the loss's gradient.
    const w = view(kernel);
    const dw = view(s.dKernel);
    const l2 = f(this.weightDecay);
    let squares = 0;
    for (let i = 0; i < w.length; i++) {
      squares += w[i]! * w[i]!;
      dw[i] = f(dw[i]! + f(l2 * f(2 * w[i]!)));
    }
    return l2 * squares;
  }
}
