import type { LearningRateSchedule } from './genome-schema.js';

/** Where one optimizer step sits in its training: the step's index and the training's length. */
export interface StepPosition {
  /** 0-based index of the step over the whole training (a resumed training continues the count). */
  step: number;
  /** Steps of the whole training: the job's epochs × the steps of one epoch. */
  totalSteps: number;
  /** Steps of one epoch (ceil(training samples / batch size)), for warm-up given in epochs. */
  stepsPerEpoch: number;
}

/**
 * The learning rate of one optimizer step under `schedule` (absent: constant), for a gene learning
 * rate `lr`. Warm-up first: over W = warmupEpochs × stepsPerEpoch steps (at most half the
 * training) the rate rises linearly, lr·(s + 1)/W at step s. Then, over the remaining
 * T' = totalSteps − W steps with t = step − W:
 * - cosine: lr_min + ½ (lr − lr_min)(1 + cos(π t / T')), lr_min = minFactor · lr (Loshchilov &
 *   Hutter, SGDR, ICLR 2017, within one run);
 * - step: lr · factor^k, k = how many of `atFractions` · T' the step has reached.
 * Pure; the same on every backend.
 */
export function learningRateAt(lr: number, schedule: LearningRateSchedule | undefined, at: StepPosition): number {
  if (!schedule || schedule.kind === 'constant') return lr;
  const total = Math.max(1, at.totalSteps);
  const warmup = Math.min(Math.floor(total / 2), schedule.warmupEpochs * at.stepsPerEpoch);
  if (at.step < warmup) return (lr * (at.step + 1)) / warmup;
  const span = Math.max(1, total - warmup);
  const t = Math.min(at.step - warmup, span);
  if (schedule.kind === 'cosine') {
    const min = schedule.minFactor * lr;
    return min + 0.5 * (lr - min) * (1 + Math.cos((Math.PI * t) / span));
  }
  const passed = schedule.atFractions.filter((f) => t >= f * span).length;
  return lr * schedule.factor ** passed;
}
