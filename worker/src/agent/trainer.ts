import type { BackendChoice } from '../training/backend.js';
import type { TrainCallOptions } from '../training/training-process.js';
import type { ChildTrainRequest } from '../training/training-protocol.js';
import type { TrainOutcome } from '../training/train-genome.js';

/**
 * What a {@link WorkerAgent} trains with. The real one is the training child process
 * (`TrainingProcess`, the default); the simulated one (`SimulatedTraining`, for tests and the scale
 * benchmark only) waits a drawn time and returns a synthetic result.
 */
export interface Trainer {
  /** Gets ready to train; resolves with the backend results will name. */
  start(): Promise<BackendChoice>;
  /** Trains one job; jobs handed over together run one after another. */
  train(request: ChildTrainRequest, call?: TrainCallOptions): Promise<TrainOutcome>;
  /** Abandons the running job at once (a forced stop). */
  kill(): void;
  /** Releases everything; no job may follow. */
  close(): Promise<void>;
}
