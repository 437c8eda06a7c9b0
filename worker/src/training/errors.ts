import { isErrorCode, NetbreederError, type ErrorCode, type GenomeIssue } from '@netbreeder/shared-types';

/**
 * Base of every error the training engine throws on purpose. Its code (and so `retryable`, from
 * the catalogue) says whether another attempt (on this or another worker) could succeed: not
 * retryable means the genome or the dataset itself is at fault.
 */
export class TrainingError extends NetbreederError {
  constructor(message: string, code: ErrorCode = 'NB_TRAINING_FAILED', options?: ErrorOptions) {
    super(code, message, options);
  }
}

/** A genome that does not fit the dataset's shapes: no retry can fix it. */
export class InvalidGenomeError extends TrainingError {
  constructor(readonly issues: GenomeIssue[]) {
    super(`genome does not fit the dataset: ${issues.map((i) => (i.nodeId ? `${i.nodeId}: ${i.message}` : i.message)).join('; ')}`, 'NB_INVALID_GENOME');
  }
}

/** A genome whose training would need more memory than the worker allows: do not retry it. */
export class GenomeTooLargeError extends TrainingError {
  constructor(
    readonly estimatedBytes: number,
    readonly capBytes: number,
  ) {
    super(
      `training this genome needs about ${(estimatedBytes / 2 ** 20).toFixed(1)} MiB, above the worker's cap of ` +
        `${(capBytes / 2 ** 20).toFixed(0)} MiB; the search space should cap its parameters, FLOPs or batch size lower`,
      'NB_GENOME_TOO_LARGE',
    );
  }
}

/** The training child process died or stopped answering mid-job: another attempt may succeed. */
export class TrainingProcessError extends TrainingError {
  constructor(message: string) {
    super(message, 'NB_TRAINING_PROCESS_FAILED');
  }
}

/** A training the caller cancelled (its AbortSignal fired). */
export class TrainingAbortedError extends TrainingError {
  constructor(message = 'training was cancelled') {
    super(message, 'NB_TRAINING_ABORTED');
  }
}

/** A training shard that does not hold what the job says (shapes, label range, regression targets): do not retry. */
export class ShardMismatchError extends TrainingError {
  constructor(message: string) {
    super(message, 'NB_SHARD_MISMATCH');
  }
}

/** Whether an error (ours or not) is worth retrying, as the catalogue says of its code; unknown errors count as retryable. */
export const isRetryable = (err: unknown): boolean => !(err instanceof NetbreederError) || err.retryable;

/** An error the training child reported, rebuilt in the parent with its code (and so its retry advice). */
export class RemoteTrainingError extends TrainingError {
  constructor(message: string, code: string) {
    super(message, isErrorCode(code) ? code : 'NB_TRAINING_FAILED');
    this.name = code === 'NB_GENOME_TOO_LARGE' ? 'GenomeTooLargeError' : 'RemoteTrainingError';
  }
}
