import { sampleSize, type LabelledSamples } from './labelled-samples.js';
import { InternalError, NetbreederError } from '../errors/netbreeder-error.js';

/**
 * The training shard a worker downloads: the train and validation splits of a run in one binary
 * file of our own layout (all integers little-endian):
 *
 *   bytes 0-3  magic "NBS1"
 *   bytes 4-7  uint32 length H of the JSON header
 *   H bytes    header: {"inputShape":[…],"classNames":[…],"train":n,"val":m}, space-padded to 4 bytes
 *   then       train features (float32 × n × sample size), train labels (int32 × n),
 *              val features (float32 × m × sample size), val labels (int32 × m)
 *
 * A regression shard says `"targets":true` in its header and follows each split's labels with its
 * standardised targets (float32 × n, then × m).
 */
export interface TrainingShard {
  inputShape: number[];
  classNames: string[];
  train: LabelledSamples;
  val: LabelledSamples;
}

const MAGIC = 'NBS1';

export function encodeShard(shard: TrainingShard): Buffer {
  const targets = shard.train.targets !== undefined;
  const header = { inputShape: shard.inputShape, classNames: shard.classNames, train: shard.train.count, val: shard.val.count, ...(targets ? { targets } : {}) };
  let headerText = JSON.stringify(header);
  headerText += ' '.repeat((4 - ((8 + Buffer.byteLength(headerText)) % 4)) % 4);
  const headerBytes = Buffer.from(headerText, 'utf8');
  const parts: Buffer[] = [Buffer.from(MAGIC, 'ascii'), Buffer.alloc(4), headerBytes];
  parts[1]!.writeUInt32LE(headerBytes.length, 0);
  for (const split of [shard.train, shard.val]) {
    parts.push(Buffer.from(split.features.buffer, split.features.byteOffset, split.features.byteLength));
    parts.push(Buffer.from(split.labels.buffer, split.labels.byteOffset, split.labels.byteLength));
    if (targets) {
      const t = split.targets ?? new Float32Array(split.count);
      if (t.length !== split.count) throw new InternalError(`a split has ${t.length} targets for ${split.count} samples`);
      parts.push(Buffer.from(t.buffer, t.byteOffset, t.byteLength));
    }
  }
  return Buffer.concat(parts);
}

/** Reads a shard, checking every length; throws an error that says what is wrong with the file. */
export function decodeShard(bytes: Uint8Array): TrainingShard {
  const buf = Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  if (buf.length < 8 || buf.toString('ascii', 0, 4) !== MAGIC) throw new NetbreederError('NB_BAD_SHARD', 'not a netbreeder training shard (bad magic); fetch it again');
  const headerLength = buf.readUInt32LE(4);
  if (8 + headerLength > buf.length) throw new NetbreederError('NB_BAD_SHARD', 'training shard is truncated inside its header; fetch it again');
  const header = JSON.parse(buf.toString('utf8', 8, 8 + headerLength)) as { inputShape: number[]; classNames: string[]; train: number; val: number; targets?: boolean };
  const size = sampleSize(header.inputShape);
  let offset = 8 + headerLength;
  const expected = offset + (header.train + header.val) * (size + (header.targets ? 2 : 1)) * 4;
  if (buf.length !== expected) throw new NetbreederError('NB_BAD_SHARD', `training shard has ${buf.length} bytes, expected ${expected}; fetch it again`);
  // Copy into fresh aligned arrays: the download buffer's offset need not be a multiple of 4.
  const read = (count: number): LabelledSamples => {
    const features = new Float32Array(count * size);
    new Uint8Array(features.buffer).set(buf.subarray(offset, offset + features.byteLength));
    offset += features.byteLength;
    const labels = new Int32Array(count);
    new Uint8Array(labels.buffer).set(buf.subarray(offset, offset + labels.byteLength));
    offset += labels.byteLength;
    if (!header.targets) return { features, labels, count };
    const targets = new Float32Array(count);
    new Uint8Array(targets.buffer).set(buf.subarray(offset, offset + targets.byteLength));
    offset += targets.byteLength;
    return { features, labels, count, targets };
  };
  const train = read(header.train);
  const val = read(header.val);
  return { inputShape: header.inputShape, classNames: header.classNames, train, val };
}
