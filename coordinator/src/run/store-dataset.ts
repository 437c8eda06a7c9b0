import { mkdir, rename, rm, stat, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { encodeShard, sha256Hex, type DatasetManifest, type PreparedDataset } from '@netbreeder/shared-types';
import type { StoredDataset } from '../store/run-store.js';
import type { DatasetPreparation } from '../datasets/index.js';

/** Writes `bytes` to `path` atomically (temp file, then rename), so a crash never leaves half a file. */
async function writeAtomic(path: string, bytes: Buffer): Promise<void> {
  const tmp = `${path}.${process.pid}.tmp`;
  try {
    await writeFile(tmp, bytes);
    await rename(tmp, path);
  } catch (err) {
    await rm(tmp, { force: true });
    throw err;
  }
}

/**
 * Stores a prepared dataset as content-addressed files under `dataDir/datasets`: the training shard
 * (train + validation, what workers download, named by its sha256) and the held-out test split
 * beside it, which never leaves the coordinator. `preparation` (how the inputs were encoded, class
 * counts, warnings) is kept in the returned record, so the champion's report can say how to feed
 * the model. If writing fails, the files written so far are removed: nothing is half-stored.
 */
export async function storeDataset(dataset: PreparedDataset, dataDir: string, preparation?: DatasetPreparation): Promise<StoredDataset> {
  const dir = join(dataDir, 'datasets');
  await mkdir(dir, { recursive: true });
  const shard = encodeShard({ inputShape: dataset.inputShape, classNames: dataset.classNames, train: dataset.train, val: dataset.val });
  const sha256 = sha256Hex(shard);
  const empty = { features: new Float32Array(0), labels: new Int32Array(0), count: 0 };
  const test = encodeShard({ inputShape: dataset.inputShape, classNames: dataset.classNames, train: dataset.test, val: empty });
  const shardPath = join(dir, `${sha256}.nbs`);
  const testPath = join(dir, `${sha256}.test.nbs`);
  const existed = await stat(shardPath).then(() => true, () => false);
  try {
    await writeAtomic(shardPath, shard);
    await writeAtomic(testPath, test);
  } catch (err) {
    // An identical shard already stored (same content, same name) belongs to another run: keep it.
    if (!existed) await rm(shardPath, { force: true });
    await rm(testPath, { force: true });
    throw err;
  }
  const manifest: DatasetManifest = {
    sha256,
    bytes: shard.length,
    inputShape: dataset.inputShape,
    numClasses: dataset.classNames.length,
    classNames: dataset.classNames,
    trainCount: dataset.train.count,
    valCount: dataset.val.count,
    ...(dataset.target ? { target: dataset.target } : {}),
  };
  return preparation ? { manifest, shardPath, testPath, preparation } : { manifest, shardPath, testPath };
}
