import type { CheckpointPolicy, CheckpointRef, RunConfig, WeightSource } from '@netbreeder/shared-types';
import type { RunStore } from '../store/run-store.js';
import { checkpointRef } from './checkpoint-files.js';
import type { Proposal } from '../search/index.js';

/** The run's checkpoint settings (a run stored before they existed gets their defaults). */
export function checkpointSettings(config: RunConfig): { everyEpochs: number; maxBytes: number; inheritance: boolean } {
  return {
    everyEpochs: config.evaluation.checkpointEveryEpochs ?? 1,
    maxBytes: (config.evaluation.checkpointMaxMb ?? 64) * 2 ** 20,
    inheritance: config.search.weightInheritance ?? false,
  };
}

/** When a search job of this run uploads checkpoints; absent when it never does. */
export function checkpointPolicy(config: RunConfig): CheckpointPolicy | undefined {
  const s = checkpointSettings(config);
  if (s.everyEpochs === 0 && !s.inheritance) return undefined;
  return { everyEpochs: s.everyEpochs, final: s.inheritance, maxBytes: s.maxBytes };
}

/**
 * The weights a new search evaluation inherits, when the run asks for weight inheritance: a
 * promoted candidate continues from the final checkpoint of the lower-rung evaluation it was
 * promoted from; a child of one parent starts from that parent's longest final checkpoint.
 * Undefined when inheritance is off or no such checkpoint is held (the training starts fresh).
 */
export function inheritedWeights(store: RunStore, config: RunConfig, runId: string, proposal: Proposal): WeightSource | undefined {
  if (!checkpointSettings(config).inheritance) return undefined;
  if (proposal.promotedFrom) {
    const lower = store.getEvaluation(proposal.promotedFrom);
    const held = lower ? store.latestCheckpoint(runId, lower.seq) : null;
    return held?.final ? { kind: 'own-checkpoint', checkpoint: checkpointRef(held) } : undefined;
  }
  if (proposal.parentHashes.length === 1) {
    const held = store.finalCheckpointOfGenome(runId, proposal.parentHashes[0]!);
    return held ? { kind: 'parent-weights', checkpoint: checkpointRef(held) } : undefined;
  }
  return undefined;
}

/**
 * The weights a final training (champion phase) starts from when the run asks for a warm start
 * (`champion.warmStart`): those its search training ended with, copied layer by layer, the final
 * training running its whole length from epoch 0 with a fresh optimizer. Undefined when the run
 * does not ask for it or that training left no final checkpoint (the final training starts fresh).
 */
export function searchWeights(store: RunStore, config: RunConfig, runId: string, sourceSeq: number): WeightSource | undefined {
  if (config.champion.warmStart === false) return undefined;
  const held = store.latestCheckpoint(runId, sourceSeq);
  return held?.final ? { kind: 'parent-weights', checkpoint: checkpointRef(held) } : undefined;
}

/** The latest checkpoint of an evaluation sequence, for the attempt that replaces a failed one. */
export function resumeRef(store: RunStore, runId: string, seq: number): CheckpointRef | undefined {
  const held = store.latestCheckpoint(runId, seq);
  return held ? checkpointRef(held) : undefined;
}
