import type { GenomeIssue } from '@netbreeder/shared-types';

/**
 * Base of every error the training engine throws on purpose. `retryable` says whether another
 * attempt (on this or another worker) could succeed: false means the genome itself is at fault.
 */
export class TrainingError extends Error {
  override name = 'TrainingError';
  readonly code: string = 'NB_TRAINING_FAILED';
  readonly retryable: boolean = true;
}

/** A genome that does not fit the dataset's shapes: no retry can fix it. */
export class InvalidGenomeError extends TrainingError {
  override readonly code = 'NB_INVALID_GENOME';
  override readonly retryable = false;
  constructor(readonly issues: GenomeIssue[]) {
    super(`genome does not fit the dataset: ${issues.map((i) => (i.nodeId ? `${i.nodeId}: ${i.message}` : i.message)).join('; ')}`);
    this.name = 'InvalidGenomeError';
  }
}

/** A genome whose training would need more memory than the worker allows: do not retry it. */
export class GenomeTooLargeError extends TrainingError {
  override readonly code = 'NB_GENOME_TOO_LARGE';
  override readonly retryable = false;
  constructor(
    readonly estimatedBytes: number,
    readonly capBytes: number,
  ) {
    super(
      `training this genome needs about ${(estimatedBytes / 2 ** 20).toFixed(1)} MiB, above the worker's cap of ` +
        `${(capBytes / 2 ** 20).toFixed(0)} MiB; the search space should cap its parameters, FLOPs or batch size lower`,
    );
    this.name = 'GenomeTooLargeError';
  }
}

/** The training child process died or stopped answering mid-job: another attempt may succeed. */
export class TrainingProcessError extends TrainingError {
  override readonly code = 'NB_TRAINING_PROCESS_FAILED';
  override readonly retryable = true;
  constructor(message: string) {
    super(message);
    this.name = 'TrainingProcessError';
  }
}

/** A training the caller cancelled (its AbortSignal fired). */
export class TrainingAbortedError extends TrainingError {
  override readonly code = 'NB_TRAINING_ABORTED';
  override readonly retryable = true;
  constructor(message = 'training was cancelled') {
    super(message);
    this.name = 'TrainingAbortedError';
  }
}

/** Whether an error (ours or not) is worth retrying; unknown errors count as retryable. */
export const isRetryable = (err: unknown): boolean => !(err instanceof TrainingError) || err.retryable;

/** An error the training child reported, rebuilt in the parent with its code and retry advice. */
export class RemoteTrainingError extends TrainingError {
  override readonly code: string;
  override readonly retryable: boolean;
  constructor(message: string, code: string, retryable: boolean) {
    super(message);
    this.code = code;
    this.retryable = retryable;
    this.name = code === 'NB_GENOME_TOO_LARGE' ? 'GenomeTooLargeError' : 'RemoteTrainingError';
  }
}
