/**
 * Entry of the training child process (forked by {@link TrainingProcess}): initialises the backend
 * once, then trains one job at a time as the parent asks, reporting every epoch. It keeps the last
 * decoded shard in memory, so consecutive jobs on one dataset read the file once.
 */
import { readFile, stat } from 'node:fs/promises';
import { concatSamples, decodeShard, NetbreederError, sampleSize, sliceSamples, type TrainingShard } from '@netbreeder/shared-types';
import { initBackend } from './backend.js';
import { ShardMismatchError, TrainingError } from './errors.js';
import type { ChildMessage, ChildTrainRequest, ParentMessage } from './training-protocol.js';
import { trainGenome } from './train-genome.js';

const send = (message: ChildMessage): Promise<void> =>
  new Promise((resolve) => {
    if (!process.send || !process.connected) return resolve();
    process.send(message, undefined, {}, () => resolve());
  });

let cached: { key: string; shard: TrainingShard } | null = null;

/** A shard whose decoded size (about its file size: float32 values) is above the worker's memory cap: do not retry. */
class ShardTooLargeError extends TrainingError {
  constructor(message: string) {
    super(message, 'NB_DATASET_TOO_LARGE');
  }
}

async function loadShard(path: string, memoryCapMb: number | undefined): Promise<TrainingShard> {
  const info = await stat(path);
  // Checked before reading: decoding holds the file and its arrays, about the file size each.
  if (memoryCapMb != null && info.size > memoryCapMb * 2 ** 20) {
    throw new ShardTooLargeError(
      `the training shard is ${(info.size / 2 ** 20).toFixed(1)} MiB decoded, above this worker's memory cap of ${memoryCapMb} MiB; ` +
        'start the worker with a larger --memory-cap, or make the run\'s dataset smaller (maxDatasetMb in the run file)',
    );
  }
  const key = `${path}:${info.size}:${info.mtimeMs}`;
  if (cached?.key !== key) {
    cached = null; // let the old shard be collected before the new one is read
    cached = { key, shard: decodeShard(await readFile(path)) };
  }
  return cached.shard;
}

async function train(id: number, request: ChildTrainRequest): Promise<void> {
  const shard = await loadShard(request.shardPath, request.memoryCapMb);
  if (sampleSize(shard.inputShape) !== sampleSize(request.data.inputShape)) {
    throw new ShardMismatchError(`the shard holds samples of shape [${shard.inputShape.join(', ')}], the job expects [${request.data.inputShape.join(', ')}]; the dataset manifest and shard disagree`);
  }
  const champion = request.splits === 'train+val';
  // A champion with a held-back check trains on train + the rest of validation and scores the first `holdout`.
  const holdout = champion ? Math.min(request.selectionHoldout ?? 0, shard.val.count) : 0;
  // CPU time of this process (every thread, user + system) over the training alone: real work, not wall time.
  const cpuBefore = process.cpuUsage();
  const outcome = await trainGenome({
    genome: request.genome,
    data: request.data,
    train: champion ? concatSamples(shard.train, sliceSamples(shard.val, holdout, shard.val.count)) : shard.train,
    val: !champion ? shard.val : holdout > 0 ? sliceSamples(shard.val, 0, holdout) : null,
    fixedLength: champion,
    budget: request.budget,
    seed: request.seed,
    exportModel: request.exportModel,
    keepBestWeights: request.keepBestWeights,
    memoryCapMb: request.memoryCapMb,
    onEpoch: (record) => void send({ type: 'epoch', id, record }),
    start: request.start,
    checkpoints: request.checkpoints,
    onCheckpoint: (bytes, epoch, final) => send({ type: 'checkpoint', id, epoch, final, bytes }),
  });
  const cpu = process.cpuUsage(cpuBefore);
  await send({ type: 'done', id, outcome: { ...outcome, cpuSeconds: (cpu.user + cpu.system) / 1e6 } });
}

let queue: Promise<void> = Promise.resolve();

process.on('message', (message: ParentMessage) => {
  if (message.type === 'shutdown') {
    void queue.finally(() => process.exit(0));
    return;
  }
  if (message.type === 'init') {
    queue = queue.then(async () => {
      try {
        const choice = await initBackend({ prefer: message.prefer });
        await send({ type: 'ready', ...choice });
      } catch (err) {
        await send({ type: 'init-failed', message: (err as Error).message });
        process.exit(1);
      }
    });
    return;
  }
  const { id, request } = message;
  queue = queue.then(async () => {
    try {
      await train(id, request);
    } catch (err) {
      await send({
        type: 'error',
        id,
        message: err instanceof Error ? err.message : String(err),
        code: err instanceof NetbreederError ? err.code : 'NB_TRAINING_FAILED',
      });
      // An error the training engine did not raise on purpose may leave the backend's heap in a
      // bad state: start the next job in a fresh process.
      if (!(err instanceof TrainingError)) process.exit(1);
    }
  });
});

process.on('disconnect', () => process.exit(0));
