import type { DataShape, LearningRateSchedule, Random, ScheduleKind, SearchSpace, TrainingGenes } from '@netbreeder/shared-types';
import { pickOther, tidyInRange } from './gene-values.js';
import type { MutationOperator } from './layer-mutations.js';

/**
 * The training recipe genes beyond the optimizer's: learning-rate schedule, image augmentation,
 * label smoothing and early stopping. Each is drawn only where the search space gives it a range
 * (a space from before these genes existed draws none of them), and a gene at its neutral value is
 * left out of the genome (a constant rate, no shift, no smoothing, no early stopping), so one
 * recipe has one form and one hash.
 */

/** A schedule of `kind` with its usual settings (common practice): cosine to 0, sometimes after a one-epoch warm-up; step ×0.1 at half and three quarters. */
export function drawSchedule(kind: ScheduleKind, rng: Random): LearningRateSchedule | undefined {
  if (kind === 'cosine') return { kind, minFactor: rng.pick([0, 0, 0.01, 0.1]), warmupEpochs: rng.chance(0.25) ? 1 : 0 };
  if (kind === 'step') return { kind, factor: rng.pick([0.1, 0.2, 0.5]), atFractions: rng.pick([[0.5, 0.75], [0.5], [0.67]]), warmupEpochs: 0 };
  return undefined;
}

const isImage = (data: DataShape | undefined) => data?.inputShape.length === 3;

/** Draws the recipe genes the space allows, in a fixed order (schedule, augmentation, smoothing, patience). */
export function drawRecipeGenes(space: SearchSpace, rng: Random, data?: DataShape): Partial<TrainingGenes> {
  const out: Partial<TrainingGenes> = {};
  if (space.schedules) {
    const schedule = drawSchedule(rng.pick(space.schedules), rng);
    if (schedule) out.schedule = schedule;
  }
  if (isImage(data) && space.shift && space.shift.max > 0) {
    const shift = rng.int(space.shift.min, space.shift.max);
    const flip = space.flips === true && rng.chance(0.5);
    if (shift > 0 || flip) out.augment = { shift, flip };
  }
  if (space.labelSmoothing && space.labelSmoothing.max > 0 && rng.chance(0.5)) {
    const eps = tidyInRange(rng.uniform(Math.max(0.01, space.labelSmoothing.min), space.labelSmoothing.max), space.labelSmoothing);
    if (eps > 0) out.labelSmoothing = eps;
  }
  if (space.patience && rng.chance(0.5)) out.patience = rng.int(space.patience.min, space.patience.max);
  return out;
}

/** One up or one down, whichever the range allows (either with even odds when both do). */
function stepWithin(v: number, range: { min: number; max: number }, rng: Random): number {
  const moves = [v - 1, v + 1].filter((x) => x >= range.min && x <= range.max);
  return moves.length ? rng.pick(moves) : v;
}

const withTraining = (training: TrainingGenes, patch: Partial<TrainingGenes>, drop: (keyof TrainingGenes)[] = []): TrainingGenes => {
  const t = { ...training, ...patch };
  for (const k of drop) delete t[k];
  return t;
};

const describeSchedule = (s: LearningRateSchedule | undefined): string =>
  !s || s.kind === 'constant' ? 'constant' : s.kind === 'cosine' ? `cosine to ×${s.minFactor}${s.warmupEpochs ? `, ${s.warmupEpochs} warm-up epoch(s)` : ''}` : `step ×${s.factor} at ${s.atFractions.join(', ')}`;

/** Switches to another schedule the space allows (or redraws the settings of the current kind when it allows one only). */
export const changeSchedule: MutationOperator = (genome, ctx) => {
  const kinds = ctx.space.schedules;
  if (!kinds) return null;
  const old = genome.training.schedule;
  const current = old?.kind ?? 'constant';
  const kind = pickOther(ctx.rng, kinds, current) ?? current;
  const next = drawSchedule(kind, ctx.rng);
  if (JSON.stringify(next) === JSON.stringify(old)) return null;
  const training = next ? withTraining(genome.training, { schedule: next }) : withTraining(genome.training, {}, ['schedule']);
  return { genome: { ...genome, training }, detail: `schedule ${describeSchedule(old)} → ${describeSchedule(next)}` };
};

/** Moves the augmentation's shift one pixel up or down, or (where the run allows flips) toggles the flip. */
export const changeAugment: MutationOperator = (genome, ctx) => {
  const range = ctx.space.shift;
  if (!isImage(ctx.data) || !range || range.max <= 0) return null;
  const old = genome.training.augment ?? { shift: 0, flip: false };
  const next = { ...old };
  if (ctx.space.flips && ctx.rng.chance(0.3)) next.flip = !old.flip;
  else next.shift = stepWithin(old.shift, range, ctx.rng);
  if (next.shift === old.shift && next.flip === old.flip) return null;
  const training = next.shift > 0 || next.flip ? withTraining(genome.training, { augment: next }) : withTraining(genome.training, {}, ['augment']);
  return { genome: { ...genome, training }, detail: `augment shift ${old.shift} → ${next.shift}${next.flip !== old.flip ? `, flip ${old.flip} → ${next.flip}` : ''}` };
};

/** Turns label smoothing on (a value in range) or off, or halves or doubles it. */
export const changeLabelSmoothing: MutationOperator = (genome, ctx) => {
  const range = ctx.space.labelSmoothing;
  if (!range || range.max <= 0) return null;
  const old = genome.training.labelSmoothing ?? 0;
  const next = old === 0 ? tidyInRange(ctx.rng.uniform(Math.max(0.01, range.min), range.max), range) : ctx.rng.chance(0.3) ? 0 : tidyInRange(old * (ctx.rng.chance(0.5) ? 2 : 0.5), range);
  if (next === old) return null;
  const training = next > 0 ? withTraining(genome.training, { labelSmoothing: next }) : withTraining(genome.training, {}, ['labelSmoothing']);
  return { genome: { ...genome, training }, detail: `label smoothing ${old} → ${next}` };
};

/** Turns early stopping on (a patience in range) or off, or moves the patience by one epoch. */
export const changePatience: MutationOperator = (genome, ctx) => {
  const range = ctx.space.patience;
  if (!range) return null;
  const old = genome.training.patience;
  const next = old === undefined ? ctx.rng.int(range.min, range.max) : ctx.rng.chance(0.3) ? undefined : stepWithin(old, range, ctx.rng);
  if (next === old) return null;
  const training = next === undefined ? withTraining(genome.training, {}, ['patience']) : withTraining(genome.training, { patience: next });
  return { genome: { ...genome, training }, detail: `patience ${old ?? 'none'} → ${next ?? 'none'}` };
};
