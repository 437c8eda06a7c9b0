import { INPUT_ID, type Genome, type LayerNode } from './genome-schema.js';

/** A tensor shape without the batch axis: `[features]` or `[height, width, channels]`. */
export type SampleShape = readonly number[];

/** What the dataset fixes for every genome of a run. */
export interface DataShape {
  inputShape: SampleShape;
  numClasses: number;
}

/** One structural problem, naming the node and how to fix it. */
export interface GenomeIssue {
  nodeId: string | null;
  message: string;
}

export interface NodeAnalysis {
  id: string;
  kind: LayerNode['kind'] | 'head-flatten' | 'head-dense';
  outputShape: SampleShape;
  params: number;
  flops: number;
}

/** Shapes, parameter count and FLOPs of a genome, computed from the genome alone. */
export interface GenomeAnalysis {
  /** Nodes in topological order, then the implicit head (`head-flatten` when needed, `head-dense`). */
  nodes: NodeAnalysis[];
  /** Every weight the model holds (trainable or not), as TensorFlow.js `countParams()` counts them. */
  params: number;
  /** Forward-pass FLOPs for one sample: 2 per multiply-add in dense and convolution layers, one per
   * pooled element compared or summed, 2 per element in batch normalization and add/concat free. */
  flops: number;
}

export type AnalysisResult = { ok: true; analysis: GenomeAnalysis } | { ok: false; issues: GenomeIssue[] };

const product = (shape: SampleShape): number => shape.reduce((a, b) => a * b, 1);

/** Output length of a sliding window along one axis, as TensorFlow computes it. */
export function windowOutputLength(length: number, window: number, stride: number, padding: 'same' | 'valid'): number {
  return padding === 'same' ? Math.ceil(length / stride) : Math.floor((length - window) / stride) + 1;
}

interface Visit {
  byId: Map<string, LayerNode>;
  state: Map<string, 'visiting' | 'done'>;
  order: LayerNode[];
  issues: GenomeIssue[];
}

/** Depth-first: puts `id`'s inputs, then `id`, on `order`; false (with the issue) on a cycle. `path`: the nodes being visited, outermost first. */
function visitNode(id: string, path: string[], v: Visit): boolean {
  if (id === INPUT_ID) return true;
  const s = v.state.get(id);
  if (s === 'done') return true;
  if (s === 'visiting') {
    v.issues.push({ nodeId: id, message: `cycle ${[...path.slice(path.indexOf(id)), id].join(' -> ')}; a genome must be acyclic` });
    return false;
  }
  v.state.set(id, 'visiting');
  const n = v.byId.get(id)!;
  path.push(id);
  for (const i of n.inputs) if (!visitNode(i, path, v)) return false;
  path.pop();
  v.state.set(id, 'done');
  v.order.push(n);
  return true;
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

/**
 * Orders the nodes so each comes after its inputs, or reports the cycle or dangling reference that
 * makes that impossible. Nodes that do not lead to the output are reported too: they would train
 * nothing.
 */
export function topologicalOrder(genome: Genome): { ok: true; order: LayerNode[] } | { ok: false; issues: GenomeIssue[] } {
  const issues: GenomeIssue[] = [];
  const byId = new Map<string, LayerNode>();
  for (const n of genome.nodes) {
    if (n.id === INPUT_ID) issues.push({ nodeId: n.id, message: `'${INPUT_ID}' is reserved for the dataset input; rename the node` });
    else if (byId.has(n.id)) issues.push({ nodeId: n.id, message: 'duplicate node id; give every node its own id' });
    else byId.set(n.id, n);
  }
  for (const n of genome.nodes) {
    for (const i of n.inputs) {
      if (i !== INPUT_ID && !byId.has(i)) issues.push({ nodeId: n.id, message: `input '${i}' is not a node of this genome` });
    }
    if (new Set(n.inputs).size !== n.inputs.length) issues.push({ nodeId: n.id, message: 'the same input is listed twice' });
  }
  if (genome.output !== INPUT_ID && !byId.has(genome.output)) {
    issues.push({ nodeId: null, message: `output '${genome.output}' is not a node of this genome` });
  }
  if (issues.length) return { ok: false, issues };

  const order: LayerNode[] = [];
  const state = new Map<string, 'visiting' | 'done'>();
  if (!visitNode(genome.output, [], { byId, state, order, issues })) return { ok: false, issues };
  for (const n of genome.nodes) {
    if (!state.has(n.id)) issues.push({ nodeId: n.id, message: 'node does not lead to the output; remove it or connect it' });
  }
  if (issues.length) return { ok: false, issues };
  return { ok: true, order };
}

/** Infers every node's shape and counts parameters and FLOPs, or reports the shape mismatches. */
export function analyzeGenome(genome: Genome, data: DataShape): AnalysisResult {
  const topo = topologicalOrder(genome);
  if (!topo.ok) return topo;
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
      case 'flatten': {
        if (!spatialInput(n, first, issues)) break;
        out = [product(first)];
        break;
      }
      case 'global-avg-pool':
      case 'global-max-pool': {
        const s = spatialInput(n, first, issues);
        if (!s) break;
        out = [s[2]];
        flops = product(s);
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
    }
    if (!out) continue;
    shapes.set(n.id, out);
    nodes.push({ id: n.id, kind: n.kind, outputShape: out, params, flops });
  }
  if (issues.length) return { ok: false, issues };

  let last = shapes.get(genome.output)!;
  if (last.length !== 1) {
    const flat = [product(last)];
    nodes.push({ id: 'head-flatten', kind: 'head-flatten', outputShape: flat, params: 0, flops: 0 });
    last = flat;
  }
  const fin = last[0]!;
  nodes.push({
    id: 'head-dense',
    kind: 'head-dense',
    outputShape: [data.numClasses],
    params: fin * data.numClasses + data.numClasses,
    flops: 2 * fin * data.numClasses,
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
      case 'max-pool2d':
      case 'avg-pool2d':
        return `${n.kind} ${n.poolSize}`;
      case 'dropout':
        return `dropout ${n.rate}`;
      case 'activation':
        return n.activation;
      case 'add':
      case 'concat':
        return `${n.kind}(${n.inputs.join(', ')})`;
      default:
        return n.kind;
    }
  };
  return [...nodes.map(part), `head ${numClasses ?? 'softmax'}`].join(' → ');
}
