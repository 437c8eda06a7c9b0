import type { Genome, LayerNode, TrainingGenes } from '@netbreeder/shared-types';
import { clamp, logUniformIn, perturbLog, pickOther } from './gene-values.js';
import type { MutationOperator } from './layer-mutations.js';

/** Mutation operators that change the training genes or a dropout rate. Same contract as the layer ones. */

const withTraining = (genome: Genome, patch: Partial<TrainingGenes>): Genome => ({ ...genome, training: { ...genome.training, ...patch } });

/** Multiplies the learning rate by 2^±u, u uniform in [0.25, 1]: a step on a log scale, kept in range. */
export const perturbLearningRate: MutationOperator = (genome, ctx) => {
  const old = genome.training.learningRate;
  const next = perturbLog(ctx.rng, old, ctx.space.learningRate);
  if (next === null) return null;
  return { genome: withTraining(genome, { learningRate: next }), detail: `learning rate ${old} → ${next}` };
};

/** Moves the batch size one step up or down the space's sorted list of batch sizes. */
export const changeBatchSize: MutationOperator = (genome, ctx) => {
  const sizes = [...ctx.space.batchSizes].sort((a, b) => a - b);
  const old = genome.training.batchSize;
  let at = sizes.indexOf(old);
  if (at < 0) at = sizes.reduce((best, s, i) => (Math.abs(s - old) < Math.abs(sizes[best]! - old) ? i : best), 0);
  // A size the space does not list moves to the nearest listed one; a listed size moves one step.
  const options = (sizes[at] === old ? [sizes[at - 1], sizes[at + 1]] : [sizes[at]]).filter((s): s is number => s !== undefined);
  if (!options.length) return null;
  const next = ctx.rng.pick(options);
  return { genome: withTraining(genome, { batchSize: next }), detail: `batch size ${old} → ${next}` };
};

/** Switches to another optimizer the space allows. */
export const changeOptimizer: MutationOperator = (genome, ctx) => {
  const old = genome.training.optimizer;
  const next = pickOther(ctx.rng, ctx.space.optimizers, old);
  if (next === null) return null;
  return { genome: withTraining(genome, { optimizer: next }), detail: `optimizer ${old} → ${next}` };
};

/**
 * Changes the weight decay: from 0 to a log-uniform value between max/100 (or min) and max; from a
 * positive value back to 0 one time in four when the range allows 0, otherwise a log-scale step.
 */
export const changeWeightDecay: MutationOperator = (genome, ctx) => {
  const r = ctx.space.weightDecay;
  const old = genome.training.weightDecay;
  let next: number | null;
  if (old <= 0) next = r.max > 0 ? logUniformIn(ctx.rng, { min: r.min > 0 ? r.min : r.max / 100, max: r.max }) : null;
  else if (r.min <= 0 && ctx.rng.chance(0.25)) next = 0;
  else next = perturbLog(ctx.rng, old, r);
  if (next === null || next === old) return null;
  return { genome: withTraining(genome, { weightDecay: next }), detail: `weight decay ${old} → ${next}` };
};

/** Moves one dropout layer's rate by ±u, u uniform in [0.05, 0.2], rounded to 0.01 and kept in range. */
export const changeDropoutRate: MutationOperator = (genome, ctx) => {
  const targets = genome.nodes.filter((n): n is Extract<LayerNode, { kind: 'dropout' }> => n.kind === 'dropout');
  if (!targets.length) return null;
  const node = ctx.rng.pick(targets);
  const step = ctx.rng.uniform(0.05, 0.2);
  const up = ctx.rng.chance(0.5);
  for (const s of [up ? step : -step, up ? -step : step]) {
    const next = clamp(Math.round((node.rate + s) * 100) / 100, ctx.space.dropoutRate);
    if (next !== node.rate) {
      return {
        genome: { ...genome, nodes: genome.nodes.map((n) => (n.id === node.id ? { ...node, rate: next } : n)) },
        detail: `dropout rate of ${node.id} ${node.rate} → ${next}`,
      };
    }
  }
  return null;
};

/** Moves the epochs budget by ±max(1, round(u·epochs)), u uniform in [0.1, 0.5], kept in range. */
export const changeEpochs: MutationOperator = (genome, ctx) => {
  const old = genome.training.epochs;
  const step = Math.max(1, Math.round(ctx.rng.uniform(0.1, 0.5) * old));
  const up = ctx.rng.chance(0.5);
  for (const s of [up ? step : -step, up ? -step : step]) {
    const next = clamp(old + s, ctx.space.epochs);
    if (next !== old) return { genome: withTraining(genome, { epochs: next }), detail: `epochs ${old} → ${next}` };
  }
  return null;
};
