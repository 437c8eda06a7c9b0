import { NetbreederError } from '../errors/netbreeder-error.js';
import { createValidator } from '../validation.js';
import { CHECKPOINT_FORMAT_VERSION, CheckpointHeaderSchema, type CheckpointHeader, type CheckpointTensor } from './checkpoint-header.js';

/**
 * A training checkpoint file, our own layout (all integers little-endian):
 *
 *   bytes 0-3   magic "NBC1"
 *   bytes 4-7   uint32 format version (1)
 *   bytes 8-11  uint32 length H of the JSON header ({@link CheckpointHeaderSchema}), UTF-8,
 *               space-padded so the data section starts at a multiple of 4
 *   H bytes     the header
 *   then        the data section: each tensor's values (float32 or int32, little-endian) at its
 *               header `offset`, one after another in header order
 *
 * The file is content-addressed: its name and every reference to it is its sha256, checked by
 * the coordinator on upload and by the worker on download.
 */
const MAGIC = [0x4e, 0x42, 0x43, 0x31]; // "NBC1"
const PREFIX = 12;

/** A checkpoint that cannot be read: wrong magic or version, a bad header, or lengths that do not add up. */
export class CheckpointFormatError extends NetbreederError {
  constructor(message: string) {
    super('NB_BAD_CHECKPOINT', message);
  }
}

/** One array to store: what the header says of it, and its values. */
export interface CheckpointArray {
  group: CheckpointTensor['group'];
  name: string;
  shape: number[];
  values: Float32Array | Int32Array;
}

export interface DecodedCheckpoint {
  header: CheckpointHeader;
  /** The arrays in header order, each a fresh aligned copy. */
  arrays: CheckpointArray[];
}

const headerValidator = createValidator('checkpoint header', CheckpointHeaderSchema);
const littleEndian = new Uint8Array(new Uint16Array([1]).buffer)[0] === 1;
const count = (shape: readonly number[]) => shape.reduce((a, b) => a * b, 1);

function assertLittleEndian(): void {
  if (!littleEndian) throw new CheckpointFormatError('checkpoints are little-endian and this machine is big-endian; it cannot read or write them');
}

/** Encodes a checkpoint; `header.tensors` is filled in from `arrays` (any given is replaced). */
export function encodeCheckpoint(header: Omit<CheckpointHeader, 'tensors' | 'formatVersion'>, arrays: readonly CheckpointArray[]): Uint8Array {
  assertLittleEndian();
  let offset = 0;
  const tensors: CheckpointTensor[] = arrays.map((a) => {
    if (a.values.length !== count(a.shape)) throw new CheckpointFormatError(`array ${a.name} has ${a.values.length} values for shape [${a.shape.join(', ')}]`);
    const t: CheckpointTensor = { group: a.group, name: a.name, dtype: a.values instanceof Int32Array ? 'int32' : 'float32', shape: [...a.shape], offset };
    offset += a.values.byteLength;
    return t;
  });
  const full: CheckpointHeader = { formatVersion: CHECKPOINT_FORMAT_VERSION, ...header, tensors };
  headerValidator.parse(full);
  let text = JSON.stringify(full);
  const encoder = new TextEncoder();
  let headerBytes = encoder.encode(text);
  const pad = (4 - ((PREFIX + headerBytes.length) % 4)) % 4;
  if (pad) headerBytes = encoder.encode((text += ' '.repeat(pad)));
  const out = new Uint8Array(PREFIX + headerBytes.length + offset);
  out.set(MAGIC, 0);
  const view = new DataView(out.buffer);
  view.setUint32(4, CHECKPOINT_FORMAT_VERSION, true);
  view.setUint32(8, headerBytes.length, true);
  out.set(headerBytes, PREFIX);
  const data = PREFIX + headerBytes.length;
  arrays.forEach((a, i) => out.set(new Uint8Array(a.values.buffer, a.values.byteOffset, a.values.byteLength), data + tensors[i]!.offset));
  return out;
}

/** Reads only the header (for the coordinator, which stores checkpoints without decoding their arrays). */
export function decodeCheckpointHeader(bytes: Uint8Array): { header: CheckpointHeader; dataOffset: number } {
  assertLittleEndian();
  if (bytes.length < PREFIX || MAGIC.some((b, i) => bytes[i] !== b)) throw new CheckpointFormatError('not a netbreeder checkpoint (bad magic)');
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const version = view.getUint32(4, true);
  if (version !== CHECKPOINT_FORMAT_VERSION) throw new CheckpointFormatError(`checkpoint format version ${version}; this program reads version ${CHECKPOINT_FORMAT_VERSION}`);
  const headerLength = view.getUint32(8, true);
  if (PREFIX + headerLength > bytes.length) throw new CheckpointFormatError('checkpoint is truncated inside its header');
  let json: unknown;
  try {
    json = JSON.parse(new TextDecoder('utf-8', { fatal: true }).decode(bytes.subarray(PREFIX, PREFIX + headerLength)));
  } catch (err) {
    throw new CheckpointFormatError(`checkpoint header is not JSON: ${(err as Error).message}`);
  }
  const issues = headerValidator.issues(json);
  if (issues.length) throw new CheckpointFormatError(`checkpoint header is invalid: ${issues.slice(0, 5).map((i) => `${i.path} ${i.message}`).join('; ')}`);
  const header = json as CheckpointHeader;
  const dataOffset = PREFIX + headerLength;
  let expected = 0;
  for (const t of header.tensors) {
    if (t.offset !== expected) throw new CheckpointFormatError(`checkpoint array ${t.name} starts at ${t.offset}, expected ${expected}`);
    expected += count(t.shape) * 4;
  }
  if (bytes.length !== dataOffset + expected) throw new CheckpointFormatError(`checkpoint has ${bytes.length} bytes, its header describes ${dataOffset + expected}`);
  return { header, dataOffset };
}

/** Decodes a whole checkpoint, checking every length; throws {@link CheckpointFormatError} saying what is wrong. */
export function decodeCheckpoint(bytes: Uint8Array): DecodedCheckpoint {
  const { header, dataOffset } = decodeCheckpointHeader(bytes);
  const arrays = header.tensors.map((t): CheckpointArray => {
    const n = count(t.shape);
    const values = t.dtype === 'int32' ? new Int32Array(n) : new Float32Array(n);
    const start = bytes.byteOffset + dataOffset + t.offset;
    // Copy into an aligned array: the input's offset need not be a multiple of 4.
    new Uint8Array(values.buffer).set(new Uint8Array(bytes.buffer, start, n * 4));
    return { group: t.group, name: t.name, shape: [...t.shape], values };
  });
  return { header, arrays };
}
