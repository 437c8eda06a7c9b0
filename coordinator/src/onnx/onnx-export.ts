import { headUnits, InternalError, type DataShape, type Genome, type ModelArtifactsMessage } from '@netbreeder/shared-types';
import { addGenomeGraph } from './genome-to-onnx.js';
import { OnnxGraphBuilder } from './onnx-graph.js';
import { encodeOnnxModel, ONNX_FLOAT, type OnnxValueInfo } from './onnx-messages.js';
import { weightsOfArtifacts } from './model-weights.js';

/** The ONNX operator set an export targets (every operator used exists in it unchanged). */
export const ONNX_OPSET = 13;
/** The ONNX IR version written with opset 13. */
export const ONNX_IR_VERSION = 7;
/** Names of the exported graph's input and output. */
export const ONNX_INPUT = 'input';
export const ONNX_OUTPUT = 'output';

/** One trained network to export: its genome and its TensorFlow.js model artifacts. */
export interface OnnxNetwork {
  genome: Genome;
  artifacts: Pick<ModelArtifactsMessage, 'weightSpecs' | 'weightDataBase64'>;
}

export interface OnnxExportOptions {
  /** What the model is, in one line (ONNX's doc string). */
  description: string;
  /** Class names in output order (classification), for the model's metadata. */
  classNames?: readonly string[];
  producerVersion: string;
}

const tensorInfo = (name: string, dims: readonly number[]): OnnxValueInfo => ({
  name,
  type: { tensorType: { elemType: ONNX_FLOAT, shape: { dim: [{ dimParam: 'batch' }, ...dims.map((d) => ({ dimValue: d }))] } } },
});

/**
 * `model.onnx` for one trained network, or for an averaging ensemble when given several: one graph
 * whose input `input` takes a batch of samples prepared as `preprocessing.json` says, in the same
 * layout as the TensorFlow.js model (images batch × height × width × channels), and whose output
 * `output` is the class probabilities (batch × classes; an ensemble's are the mean of its members')
 * or, for regression, the standardised prediction (batch × 1). Opset {@link ONNX_OPSET}.
 */
export function onnxModelBytes(networks: readonly OnnxNetwork[], data: DataShape, options: OnnxExportOptions): Uint8Array {
  if (networks.length === 0) throw new InternalError('an ONNX export needs at least one network');
  const graph = new OnnxGraphBuilder();
  const outputs = networks.map((network, k) => {
    const member = networks.length === 1 ? graph : new OnnxGraphBuilder(`member${k + 1}/`);
    const out = addGenomeGraph(member, network.genome, data, weightsOfArtifacts(network.artifacts), ONNX_INPUT);
    if (member !== graph) {
      graph.nodes.push(...member.nodes);
      graph.initializers.push(...member.initializers);
    }
    return out;
  });
  graph.nodes.push({ name: ONNX_OUTPUT, opType: outputs.length === 1 ? 'Identity' : 'Mean', input: outputs, output: [ONNX_OUTPUT], attribute: [] });
  return encodeOnnxModel({
    irVersion: ONNX_IR_VERSION,
    producerName: 'netbreeder',
    producerVersion: options.producerVersion,
    docString: options.description,
    opsetImport: [{ domain: '', version: ONNX_OPSET }],
    metadataProps: options.classNames && !data.target ? [{ key: 'classNames', value: JSON.stringify(options.classNames) }] : [],
    graph: {
      name: networks.length === 1 ? 'champion' : 'ensemble',
      node: graph.nodes,
      initializer: graph.initializers,
      input: [tensorInfo(ONNX_INPUT, data.inputShape)],
      output: [tensorInfo(ONNX_OUTPUT, [headUnits(data)])],
    },
  });
}
