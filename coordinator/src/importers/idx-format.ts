import { DatasetError } from '../datasets/dataset-error.js';

/**
 * The IDX file format of the MNIST distribution, pure: a 4-byte magic number (two zero bytes, a
 * data type code, the number of dimensions), one big-endian uint32 size per dimension, then the
 * values in row-major order, big-endian.
 */
export interface IdxArray {
  /** 0x08 unsigned byte, 0x09 signed byte, 0x0B int16, 0x0C int32, 0x0D float32, 0x0E float64. */
  typeCode: number;
  dims: number[];
  /** The values; unsigned bytes are a view into the input, other types a converted copy. */
  values: Uint8Array | Int8Array | Int16Array | Int32Array | Float32Array | Float64Array;
}

/** Bytes per value of each IDX type code. */
export const IDX_TYPES: Readonly<Record<number, { bytes: number; name: string }>> = {
  0x08: { bytes: 1, name: 'unsigned byte' },
  0x09: { bytes: 1, name: 'signed byte' },
  0x0b: { bytes: 2, name: 'int16' },
  0x0c: { bytes: 4, name: 'int32' },
  0x0d: { bytes: 4, name: 'float32' },
  0x0e: { bytes: 8, name: 'float64' },
};

const hex = (n: number): string => `0x${n.toString(16).padStart(8, '0')}`;

/** Parses IDX bytes, checking the magic number and that the length matches the header. */
export function parseIdx(bytes: Uint8Array, file: string): IdxArray {
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  if (bytes.length < 4) throw new DatasetError('NB_DATASET_BAD_IDX', `${file} has ${bytes.length} bytes, too short for an IDX header`, { file });
  const magic = view.getUint32(0, false);
  const typeCode = bytes[2]!;
  const ndims = bytes[3]!;
  const type = IDX_TYPES[typeCode];
  if (bytes[0] !== 0 || bytes[1] !== 0 || !type || ndims === 0) {
    throw new DatasetError(
      'NB_DATASET_BAD_IDX',
      `${file} has magic number ${hex(magic)}, which is not IDX (expected 0x000008nn, e.g. 0x00000803 for MNIST images, 0x00000801 for labels); ` +
        'is it still compressed in another format, or not an IDX file?',
      { file },
    );
  }
  const headerBytes = 4 + 4 * ndims;
  if (bytes.length < headerBytes) throw new DatasetError('NB_DATASET_BAD_IDX', `${file} ends inside its header (${ndims} dimensions need ${headerBytes} bytes)`, { file });
  const dims: number[] = [];
  for (let d = 0; d < ndims; d++) dims.push(view.getUint32(4 + 4 * d, false));
  const count = dims.reduce((a, b) => a * b, 1);
  const expected = headerBytes + count * type.bytes;
  if (bytes.length !== expected) {
    throw new DatasetError(
      'NB_DATASET_BAD_IDX',
      `${file} has ${bytes.length} bytes, but its header (${type.name}, sizes ${dims.join(' × ')}) needs ${expected}; the file is ${bytes.length < expected ? 'truncated' : 'longer than its header says'}`,
      { file },
    );
  }
  return { typeCode, dims, values: readValues(view, headerBytes, count, typeCode, bytes) };
}

function readValues(view: DataView, at: number, count: number, typeCode: number, bytes: Uint8Array): IdxArray['values'] {
  switch (typeCode) {
    case 0x08:
      return bytes.subarray(at, at + count);
    case 0x09:
      return new Int8Array(bytes.buffer, bytes.byteOffset + at, count);
    case 0x0b: {
      const out = new Int16Array(count);
      for (let i = 0; i < count; i++) out[i] = view.getInt16(at + 2 * i, false);
      return out;
    }
    case 0x0c: {
      const out = new Int32Array(count);
      for (let i = 0; i < count; i++) out[i] = view.getInt32(at + 4 * i, false);
      return out;
    }
    case 0x0d: {
      const out = new Float32Array(count);
      for (let i = 0; i < count; i++) out[i] = view.getFloat32(at + 4 * i, false);
      return out;
    }
    default: {
      const out = new Float64Array(count);
      for (let i = 0; i < count; i++) out[i] = view.getFloat64(at + 8 * i, false);
      return out;
    }
  }
}
