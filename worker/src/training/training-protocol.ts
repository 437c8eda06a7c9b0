import type { BackendName, DataShape, EpochRecord, Genome, TrainingBudget } from '@netbreeder/shared-types';
import type { TrainOutcome } from './train-genome.js';
import type { StartCheckpoint } from './training-checkpoint.js';

/**
 * One training, as the parent hands it to the training child: the samples come from a shard file
 * on disk (the shared-types shard format), which the child decodes once and caches by path.
 */
export interface ChildTrainRequest {
  genome: Genome;
  data: DataShape;
  /** A training shard (`encodeShard` format) on this machine. */
  shardPath: string;
  /** `train`: train on the train split, score on validation. `train+val`: train on both, no validation (champions). */
  splits: 'train' | 'train+val';
  /** With `train+val`: the first this many validation samples are held back and score the final weights (see `EvaluationJob.selectionHoldout`). */
  selectionHoldout?: number;
  budget: TrainingBudget;
  seed: number;
  exportModel?: boolean;
  /** See `TrainRequest.keepBestWeights`. */
  keepBestWeights?: boolean;
  memoryCapMb?: number;
  /** Weights and state to start from (see `TrainRequest.start`). */
  start?: StartCheckpoint;
  /** Checkpoints to take; each is sent to the parent as a `checkpoint` message. */
  checkpoints?: { everyEpochs: number; final: boolean; runId: string; evaluationId: string };
}

/** Parent → child messages. */
export type ParentMessage =
  | { type: 'init'; prefer?: BackendName[] }
  | { type: 'train'; id: number; request: ChildTrainRequest }
  | { type: 'shutdown' };

/** Child → parent messages. */
export type ChildMessage =
  | { type: 'ready'; backend: BackendName; reason: string }
  | { type: 'init-failed'; message: string }
  | { type: 'epoch'; id: number; record: EpochRecord }
  | { type: 'checkpoint'; id: number; epoch: number; final: boolean; bytes: Uint8Array }
  | { type: 'done'; id: number; outcome: TrainOutcome }
  | { type: 'error'; id: number; message: string; code: string };
