import protobuf from 'protobufjs';

/**
 * The part of the ONNX model format (the open standard's `onnx.proto`, IR version 7) that an
 * export writes: a model with one graph of nodes, attributes, float initializers and typed
 * inputs and outputs. Field numbers are the standard's; messages and fields an export never
 * writes are left out (a reader skips nothing, since they are absent). Encoded with protobufjs.
 */
const DESCRIPTOR = {
  nested: {
    onnx: {
      nested: {
        ModelProto: {
          fields: {
            irVersion: { type: 'int64', id: 1 },
            producerName: { type: 'string', id: 2 },
            producerVersion: { type: 'string', id: 3 },
            docString: { type: 'string', id: 6 },
            graph: { type: 'GraphProto', id: 7 },
            opsetImport: { rule: 'repeated', type: 'OperatorSetIdProto', id: 8 },
            metadataProps: { rule: 'repeated', type: 'StringStringEntryProto', id: 14 },
          },
        },
        OperatorSetIdProto: { fields: { domain: { type: 'string', id: 1 }, version: { type: 'int64', id: 2 } } },
        StringStringEntryProto: { fields: { key: { type: 'string', id: 1 }, value: { type: 'string', id: 2 } } },
        GraphProto: {
          fields: {
            node: { rule: 'repeated', type: 'NodeProto', id: 1 },
            name: { type: 'string', id: 2 },
            initializer: { rule: 'repeated', type: 'TensorProto', id: 5 },
            docString: { type: 'string', id: 10 },
            input: { rule: 'repeated', type: 'ValueInfoProto', id: 11 },
            output: { rule: 'repeated', type: 'ValueInfoProto', id: 12 },
          },
        },
        NodeProto: {
          fields: {
            input: { rule: 'repeated', type: 'string', id: 1 },
            output: { rule: 'repeated', type: 'string', id: 2 },
            name: { type: 'string', id: 3 },
            opType: { type: 'string', id: 4 },
            attribute: { rule: 'repeated', type: 'AttributeProto', id: 5 },
          },
        },
        AttributeProto: {
          fields: {
            name: { type: 'string', id: 1 },
            f: { type: 'float', id: 2 },
            i: { type: 'int64', id: 3 },
            ints: { rule: 'repeated', type: 'int64', id: 8 },
            type: { type: 'int32', id: 20 },
          },
        },
        TensorProto: {
          fields: {
            dims: { rule: 'repeated', type: 'int64', id: 1 },
            dataType: { type: 'int32', id: 2 },
            name: { type: 'string', id: 8 },
            rawData: { type: 'bytes', id: 9 },
          },
        },
        ValueInfoProto: { fields: { name: { type: 'string', id: 1 }, type: { type: 'TypeProto', id: 2 } } },
        TypeProto: { fields: { tensorType: { type: 'TypeProtoTensor', id: 1 } } },
        TypeProtoTensor: { fields: { elemType: { type: 'int32', id: 1 }, shape: { type: 'TensorShapeProto', id: 2 } } },
        TensorShapeProto: { fields: { dim: { rule: 'repeated', type: 'TensorShapeDimension', id: 1 } } },
        TensorShapeDimension: { fields: { dimValue: { type: 'int64', id: 1 }, dimParam: { type: 'string', id: 2 } } },
      },
    },
  },
};

const root = protobuf.Root.fromJSON(DESCRIPTOR);
const ModelProto = root.lookupType('onnx.ModelProto');

/** ONNX's element type code for 32-bit floats (`TensorProto.DataType.FLOAT`). */
export const ONNX_FLOAT = 1;
/** … and for 64-bit integers (`TensorProto.DataType.INT64`: axes and shapes). */
export const ONNX_INT64 = 7;
/** Attribute type codes (`AttributeProto.AttributeType`). */
export const ATTRIBUTE_TYPE = { float: 1, int: 2, ints: 7 } as const;

export interface OnnxAttribute {
  name: string;
  type: number;
  f?: number;
  i?: number;
  ints?: number[];
}
export interface OnnxNode {
  name: string;
  opType: string;
  input: string[];
  output: string[];
  attribute: OnnxAttribute[];
}
export interface OnnxTensor {
  name: string;
  dims: number[];
  dataType: number;
  rawData: Uint8Array;
}
/** A graph input or output: a float tensor whose first axis is the batch (`dimParam`) and the rest fixed. */
export interface OnnxValueInfo {
  name: string;
  type: { tensorType: { elemType: number; shape: { dim: Array<{ dimValue?: number; dimParam?: string }> } } };
}
export interface OnnxModel {
  irVersion: number;
  producerName: string;
  producerVersion: string;
  docString: string;
  opsetImport: Array<{ domain: string; version: number }>;
  metadataProps: Array<{ key: string; value: string }>;
  graph: { name: string; node: OnnxNode[]; initializer: OnnxTensor[]; input: OnnxValueInfo[]; output: OnnxValueInfo[] };
}

/** The model's protobuf bytes (what `model.onnx` holds). */
export function encodeOnnxModel(model: OnnxModel): Uint8Array {
  const message = ModelProto.fromObject(model);
  return ModelProto.encode(message).finish();
}

/** Reads `model.onnx` bytes back into plain objects (int64 fields as numbers), for checks. */
export function decodeOnnxModel(bytes: Uint8Array): OnnxModel {
  return ModelProto.toObject(ModelProto.decode(bytes), { longs: Number, arrays: true }) as unknown as OnnxModel;
}
