import type { EvaluationJob, EvaluationResult } from '@netbreeder/shared-types';

/** Queue work and notifications a reconcile pass decided, carried out once its transaction has committed. */
export interface QueueBatch {
  add: EvaluationJob[];
  remove: string[];
  recorded: Array<{ evaluationId: string; result: EvaluationResult }>;
  /** True when the search algorithm saw a result or made a proposal, so its state must be saved. */
  searchChanged: boolean;
}

export const emptyBatch = (): QueueBatch => ({ add: [], remove: [], recorded: [], searchChanged: false });
