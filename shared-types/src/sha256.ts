import { createHash } from 'node:crypto';

/** sha256 of `data` as 64 lowercase hex digits: the content address of shards, checkpoints and genomes. */
export const sha256Hex = (data: Uint8Array | string): string => createHash('sha256').update(data).digest('hex');
