import { InternalError } from '@netbreeder/shared-types';
import { ATTRIBUTE_TYPE, ONNX_FLOAT, ONNX_INT64, type OnnxAttribute, type OnnxNode, type OnnxTensor } from './onnx-messages.js';

/** Attribute helpers: an ONNX node's named integer, integer list or float setting. */
export const intAttr = (name: string, i: number): OnnxAttribute => ({ name, type: ATTRIBUTE_TYPE.int, i });
export const intsAttr = (name: string, ints: number[]): OnnxAttribute => ({ name, type: ATTRIBUTE_TYPE.ints, ints });
export const floatAttr = (name: string, f: number): OnnxAttribute => ({ name, type: ATTRIBUTE_TYPE.float, f });

/**
 * Collects the nodes and float initializers of one ONNX graph. Every name it hands out starts with
 * `prefix`, so several networks (an ensemble's members) can share one graph without collisions.
 */
export class OnnxGraphBuilder {
  readonly nodes: OnnxNode[] = [];
  readonly initializers: OnnxTensor[] = [];
  private readonly used = new Set<string>();

  constructor(private readonly prefix = '') {}

  /** A fresh value name derived from `base` (a suffix is added when it was handed out before). */
  name(base: string): string {
    let name = `${this.prefix}${base}`;
    for (let k = 2; this.used.has(name); k++) name = `${this.prefix}${base}_${k}`;
    this.used.add(name);
    return name;
  }

  /** Adds a node computing `opType` of `inputs`; returns the name of its (single) output. */
  op(opType: string, inputs: string[], outputBase: string, attribute: OnnxAttribute[] = []): string {
    return this.opOutputs(opType, inputs, [outputBase], attribute)[0]!;
  }

  /** Adds a node with several outputs (an empty base leaves that optional output unnamed, so unused); returns their names. */
  opOutputs(opType: string, inputs: string[], outputBases: string[], attribute: OnnxAttribute[] = []): string[] {
    const outputs = outputBases.map((b) => (b ? this.name(b) : ''));
    this.nodes.push({ name: outputs.find((o) => o) ?? this.name(opType), opType, input: inputs, output: outputs, attribute });
    return outputs;
  }

  /** Adds an int64 constant (axes, shapes); returns its name. */
  int64Constant(base: string, dims: number[], values: readonly number[]): string {
    const name = this.name(base);
    const data = BigInt64Array.from(values.map((v) => BigInt(v)));
    this.initializers.push({ name, dims, dataType: ONNX_INT64, rawData: new Uint8Array(data.buffer) });
    return name;
  }

  /** Adds a float32 constant of this shape; returns its name. */
  constant(base: string, dims: number[], values: Float32Array): string {
    const expected = dims.reduce((a, b) => a * b, 1);
    if (values.length !== expected) throw new InternalError(`constant ${base}: ${values.length} values for shape [${dims.join(', ')}] (needs ${expected})`);
    const name = this.name(base);
    const rawData = new Uint8Array(values.buffer.slice(values.byteOffset, values.byteOffset + values.byteLength));
    this.initializers.push({ name, dims, dataType: ONNX_FLOAT, rawData });
    return name;
  }
}
