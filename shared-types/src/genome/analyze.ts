import { INPUT_ID, type Genome, type LayerNode } from './genome-schema.js';
import { topologicalOrder, type GenomeIssue } from './graph-order.js';
import { expandMotifs, issueInGenomeTerms, motifAsGenome, motifIssues, motifsById } from './motifs.js';
import type { TargetScaling } from '../messages/dataset-manifest.js';
import { InternalError } from '../errors/netbreeder-error.js';

export { topologicalOrder, type GenomeIssue } from './graph-order.js';

/** A tensor shape without the batch axis: `[features]`, `[timeSteps, channels]` or `[height, width, channels]`. */
export type SampleShape = readonly number[];

/** What the dataset fixes for every genome of a run. */
export interface DataShape {
  inputShape: SampleShape;
  /** Classes of a classifier; of a regression run, the target quantile bins its split was stratified by. */
  numClasses: number;
  /** Present for a regression run: the head is one linear unit predicting the target standardised with this scaling. */
  target?: TargetScaling;
}

/** Units of the implicit head: one per class, or one linear unit for a regression target. */
export const headUnits = (data: DataShape): number => (data.target ? 1 : data.numClasses);

export interface NodeAnalysis {
  id: string;
  kind: LayerNode['kind'] | 'head-flatten' | 'head-dense';
  outputShape: SampleShape;
  params: number;
  flops: number;
}

/** Shapes, parameter count and FLOPs of a genome, computed from the genome alone. */
export interface GenomeAnalysis {
  /**
   * Layers in topological order, then the implicit head (`head-flatten` when needed, `head-dense`).
   * A repeat's motif is listed once per application (ids `r.k.c`, see `expandMotifs`), followed by
   * an entry of kind `repeat` with the repeat's own id, its output shape and no parameters or FLOPs
   * of its own (those are on its layers, so sums over the list count every application once).
   */
  nodes: NodeAnalysis[];
  /** Every weight the model holds (trainable or not), as TensorFlow.js `countParams()` counts them. */
  params: number;
  /** Forward-pass FLOPs for one sample: 2 per multiply-add in dense and convolution layers, one per
   * pooled element compared or summed, 2 per element in batch normalization and add/concat free;
   * a recurrent layer counts 2 per multiply-add of its gate matrices at every time step. */
  flops: number;
}

export type AnalysisResult = { ok: true; analysis: GenomeAnalysis } | { ok: false; issues: GenomeIssue[] };

const product = (shape: SampleShape): number => shape.reduce((a, b) => a * b, 1);

/** Output length of a sliding window along one axis, as TensorFlow computes it. */
export function windowOutputLength(length: number, window: number, stride: number, padding: 'same' | 'valid'): number {
  return padding === 'same' ? Math.ceil(length / stride) : Math.floor((length - window) / stride) + 1;
}

/** An issue of node `n`. */
const issueAt = (n: LayerNode, message: string): GenomeIssue => ({ nodeId: n.id, message });

/** The input of a spatial layer as height × width × channels, or null (with the issue) when it is flat. */
function spatialInput(n: LayerNode, first: SampleShape, issues: GenomeIssue[]): [number, number, number] | null {
  if (first.length !== 3) {
    issues.push({ nodeId: n.id, message: `${n.kind} needs a spatial input (height × width × channels) but gets [${first.join(', ')}]; use it before flatten or a global pool` });
    return null;
  }
  return first as unknown as [number, number, number];
}

/** The input of a sequence layer as time steps × channels, or null (with the issue) when it is not. */
function sequenceInput(n: LayerNode, first: SampleShape, issues: GenomeIssue[]): [number, number] | null {
  if (first.length !== 2) {
    issues.push({ nodeId: n.id, message: `${n.kind} needs a sequence input (time steps × channels) but gets [${first.join(', ')}]; use it on sequence data, before flatten, a global pool or a recurrent layer without returnSequences` });
    return null;
  }
  return first as unknown as [number, number];
}

/** Gates of a recurrent layer: TensorFlow.js's LSTM has four (input, forget, cell, output), its GRU three (update, reset, candidate). */
export const RECURRENT_GATES = { lstm: 4, gru: 3 } as const;

/** Infers every node's shape and counts parameters and FLOPs, or reports the shape mismatches. */
export function analyzeGenome(genome: Genome, data: DataShape): AnalysisResult {
  const motifProblems = motifIssues(genome);
  if (motifProblems.length) return { ok: false, issues: motifProblems };
  const ownOrder = topologicalOrder(genome);
  if (!ownOrder.ok) return ownOrder;
  const expanded = expandMotifs(genome);
  const topo = expanded.genome === genome ? ownOrder : topologicalOrder(expanded.genome);
  if (!topo.ok) return { ok: false, issues: topo.issues.map((i) => issueInGenomeTerms(i, genome)) };
  const repeatAt = new Map([...expanded.repeatOutputs].map(([repeat, layer]) => [layer, repeat] as const));
  const issues: GenomeIssue[] = [];
  const shapes = new Map<string, SampleShape>([[INPUT_ID, data.inputShape]]);
  const nodes: NodeAnalysis[] = [];

  for (const n of topo.order) {
    const maybeShapes = n.inputs.map((i) => shapes.get(i));
    // An input whose own analysis failed has no shape; its issue is reported already, so skip.
    if (maybeShapes.some((s) => s === undefined)) continue;
    const inShapes = maybeShapes as SampleShape[];
    const first = inShapes[0]!;
    let out: SampleShape | null = null;
    let params = 0;
    let flops = 0;
    switch (n.kind) {
      case 'dense': {
        if (first.length !== 1) {
          issues.push(issueAt(n, `dense needs a flat input but gets [${first.join(', ')}]; put flatten or a global pool before it`));
          break;
        }
        const fin = first[0]!;
        out = [n.units];
        params = fin * n.units + n.units;
        flops = 2 * fin * n.units;
        break;
      }
      case 'conv2d':
      case 'depthwise-conv2d': {
        const s = spatialInput(n, first, issues);
        if (!s) break;
        const [h, w, c] = s;
        const oh = windowOutputLength(h, n.kernelSize, n.strides, n.padding);
        const ow = windowOutputLength(w, n.kernelSize, n.strides, n.padding);
        if (oh < 1 || ow < 1) {
          issues.push(issueAt(n, `kernel ${n.kernelSize} with '${n.padding}' padding does not fit a ${h}×${w} input; use 'same' padding or a smaller kernel`));
          break;
        }
        const outC = n.kind === 'conv2d' ? n.filters : c * n.depthMultiplier;
        const macsPerOut = n.kind === 'conv2d' ? n.kernelSize * n.kernelSize * c : n.kernelSize * n.kernelSize;
        out = [oh, ow, outC];
        params = n.kind === 'conv2d' ? n.kernelSize * n.kernelSize * c * n.filters + n.filters : n.kernelSize * n.kernelSize * c * n.depthMultiplier + outC;
        flops = 2 * macsPerOut * oh * ow * outC;
        break;
      }
      case 'max-pool2d':
      case 'avg-pool2d': {
        const s = spatialInput(n, first, issues);
        if (!s) break;
        const [h, w, c] = s;
        const oh = windowOutputLength(h, n.poolSize, n.strides, 'valid');
        const ow = windowOutputLength(w, n.poolSize, n.strides, 'valid');
        if (oh < 1 || ow < 1) {
          issues.push(issueAt(n, `pool ${n.poolSize} does not fit a ${h}×${w} input; remove the pool or pool earlier less often`));
          break;
        }
        out = [oh, ow, c];
        flops = n.poolSize * n.poolSize * oh * ow * c;
        break;
      }
      case 'conv1d': {
        const s = sequenceInput(n, first, issues);
        if (!s) break;
        const [t, c] = s;
        if (n.dilation > 1 && n.strides > 1) {
          issues.push(issueAt(n, `a dilated conv1d (dilation ${n.dilation}) needs stride 1 but has stride ${n.strides}; set strides or dilation to 1`));
          break;
        }
        const span = (n.kernelSize - 1) * n.dilation + 1;
        const ot = windowOutputLength(t, span, n.strides, n.padding);
        if (ot < 1) {
          issues.push(issueAt(n, `kernel ${n.kernelSize} (dilation ${n.dilation}) with 'valid' padding does not fit ${t} time steps; use 'same' padding, a smaller kernel or dilation`));
          break;
        }
        out = [ot, n.filters];
        params = n.kernelSize * c * n.filters + n.filters;
        flops = 2 * n.kernelSize * c * ot * n.filters;
        break;
      }
      case 'max-pool1d':
      case 'avg-pool1d': {
        const s = sequenceInput(n, first, issues);
        if (!s) break;
        const [t, c] = s;
        const ot = windowOutputLength(t, n.poolSize, n.strides, 'valid');
        if (ot < 1) {
          issues.push(issueAt(n, `pool ${n.poolSize} does not fit ${t} time steps; remove the pool or pool earlier less often`));
          break;
        }
        out = [ot, c];
        flops = n.poolSize * ot * c;
        break;
      }
      case 'lstm':
      case 'gru': {
        const s = sequenceInput(n, first, issues);
        if (!s) break;
        const [t, c] = s;
        const gates = RECURRENT_GATES[n.kind];
        out = n.returnSequences ? [t, n.units] : [n.units];
        params = gates * n.units * (c + n.units + 1);
        flops = 2 * t * gates * n.units * (c + n.units);
        break;
      }
      case 'flatten': {
        if (first.length < 2) {
          issues.push(issueAt(n, `flatten needs a sequence or spatial input but gets [${first.join(', ')}], which is flat already; remove it`));
          break;
        }
        out = [product(first)];
        break;
      }
      case 'global-avg-pool':
      case 'global-max-pool': {
        if (first.length < 2) {
          issues.push(issueAt(n, `${n.kind} needs a spatial input (height × width × channels) or a sequence (time steps × channels) but gets [${first.join(', ')}]; use it before flatten`));
          break;
        }
        out = [first[first.length - 1]!];
        flops = product(first);
        break;
      }
      case 'dropout':
      case 'activation':
        out = first;
        break;
      case 'batch-norm': {
        const channels = first[first.length - 1]!;
        out = first;
        params = 4 * channels; // gamma, beta, moving mean, moving variance
        flops = 2 * product(first);
        break;
      }
      case 'add': {
        if (inShapes.some((s) => s.join('x') !== first.join('x'))) {
          issues.push(issueAt(n, `add needs inputs of one shape but gets ${inShapes.map((s) => `[${s.join(', ')}]`).join(' and ')}; join branches of equal shape or use concat`));
          break;
        }
        out = first;
        flops = (inShapes.length - 1) * product(first);
        break;
      }
      case 'concat': {
        const rank = first.length;
        const lead = (s: SampleShape) => s.slice(0, -1).join('x');
        if (inShapes.some((s) => s.length !== rank || lead(s) !== lead(first))) {
          issues.push(issueAt(n, `concat needs inputs equal in all but the last axis but gets ${inShapes.map((s) => `[${s.join(', ')}]`).join(' and ')}`));
          break;
        }
        out = [...first.slice(0, -1), inShapes.reduce((a, s) => a + s[s.length - 1]!, 0)];
        break;
      }
      case 'repeat':
        throw new InternalError('expandMotifs leaves no repeat node');
    }
    if (!out) continue;
    shapes.set(n.id, out);
    nodes.push({ id: n.id, kind: n.kind, outputShape: out, params, flops });
    const repeat = repeatAt.get(n.id);
    if (repeat !== undefined) nodes.push({ id: repeat, kind: 'repeat', outputShape: out, params: 0, flops: 0 });
  }
  if (issues.length) return { ok: false, issues: issues.map((i) => issueInGenomeTerms(i, genome)) };

  let last = shapes.get(expanded.genome.output)!;
  if (last.length !== 1) {
    const flat = [product(last)];
    nodes.push({ id: 'head-flatten', kind: 'head-flatten', outputShape: flat, params: 0, flops: 0 });
    last = flat;
  }
  const fin = last[0]!;
  nodes.push({
    id: 'head-dense',
    kind: 'head-dense',
    outputShape: [headUnits(data)],
    params: fin * headUnits(data) + headUnits(data),
    flops: 2 * fin * headUnits(data),
  });
  return {
    ok: true,
    analysis: {
      nodes,
      params: nodes.reduce((a, n) => a + n.params, 0),
      flops: nodes.reduce((a, n) => a + n.flops, 0),
    },
  };
}

/** A one-line description such as `conv2d 3×3×16 → max-pool2d 2 → dense 64 → head 4`. */
export function describeGenome(genome: Genome, numClasses?: number): string {
  const topo = topologicalOrder(genome);
  const nodes = topo.ok ? topo.order : genome.nodes;
  const part = (n: LayerNode): string => {
    switch (n.kind) {
      case 'dense':
        return `dense ${n.units} ${n.activation}`;
      case 'conv2d':
        return `conv2d ${n.kernelSize}×${n.kernelSize}×${n.filters}${n.strides > 1 ? ` /${n.strides}` : ''} ${n.activation}`;
      case 'depthwise-conv2d':
        return `depthwise ${n.kernelSize}×${n.kernelSize}×${n.depthMultiplier}${n.strides > 1 ? ` /${n.strides}` : ''} ${n.activation}`;
      case 'conv1d':
        return `conv1d ${n.kernelSize}×${n.filters}${n.strides > 1 ? ` /${n.strides}` : ''}${n.dilation > 1 ? ` dil ${n.dilation}` : ''} ${n.activation}`;
      case 'max-pool2d':
      case 'avg-pool2d':
      case 'max-pool1d':
      case 'avg-pool1d':
        return `${n.kind} ${n.poolSize}`;
      case 'lstm':
      case 'gru':
        return `${n.kind} ${n.units}${n.returnSequences ? ' seq' : ''}`;
      case 'dropout':
        return `dropout ${n.rate}`;
      case 'activation':
        return n.activation;
      case 'add':
      case 'concat':
        return `${n.kind}(${n.inputs.join(', ')})`;
      case 'repeat': {
        const motif = motifsById(genome).get(n.motif);
        const order = motif ? topologicalOrder(motifAsGenome(genome, motif)) : null;
        return `${n.times}× ${n.motif}(${order?.ok ? order.order.map(part).join(' → ') : '?'})`;
      }
      default:
        return n.kind;
    }
  };
  return [...nodes.map(part), `head ${numClasses ?? 'softmax'}`].join(' → ');
}
