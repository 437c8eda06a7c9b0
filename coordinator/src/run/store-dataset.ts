import { createHash } from 'node:crypto';
import { mkdir, rename, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { encodeShard, type DatasetManifest, type PreparedDataset } from '@netbreeder/shared-types';
import type { StoredDataset } from '../store/run-store.js';

/** Writes `bytes` to `path` atomically (temp file, then rename), so a crash never leaves half a file. */
async function writeAtomic(path: string, bytes: Buffer): Promise<void> {
  const tmp = `${path}.${process.pid}.tmp`;
  await writeFile(tmp, bytes);
  await rename(tmp, path);
}

/**
 * Stores a prepared dataset as content-addressed files under `dataDir/datasets`: the training shard
 * (train + validation, what workers download, named by its sha256) and the held-out test split
 * beside it, which never leaves the coordinator.
 */
export async function storeDataset(dataset: PreparedDataset, dataDir: string): Promise<StoredDataset> {
  const dir = join(dataDir, 'datasets');
  await mkdir(dir, { recursive: true });
  const shard = encodeShard({ inputShape: dataset.inputShape, classNames: dataset.classNames, train: dataset.train, val: dataset.val });
  const sha256 = createHash('sha256').update(shard).digest('hex');
  const empty = { features: new Float32Array(0), labels: new Int32Array(0), count: 0 };
  const test = encodeShard({ inputShape: dataset.inputShape, classNames: dataset.classNames, train: dataset.test, val: empty });
  const shardPath = join(dir, `${sha256}.nbs`);
  const testPath = join(dir, `${sha256}.test.nbs`);
  await writeAtomic(shardPath, shard);
  await writeAtomic(testPath, test);
  const manifest: DatasetManifest = {
    sha256,
    bytes: shard.length,
    inputShape: dataset.inputShape,
    numClasses: dataset.classNames.length,
    classNames: dataset.classNames,
    trainCount: dataset.train.count,
    valCount: dataset.val.count,
  };
  return { manifest, shardPath, testPath };
}
