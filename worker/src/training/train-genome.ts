import * as tf from '@tensorflow/tfjs';
import {
  analyzeGenome,
  createRandom,
  genomeHash,
  learningRateAt,
  regressionFitness,
  restoreRandom,
  sampleSize,
  type DataShape,
  type EpochRecord,
  type EvaluationResult,
  type Genome,
  type LabelledSamples,
  type OptimizerName,
  type TrainingBudget,
} from '@netbreeder/shared-types';
import { currentBackend } from './backend.js';
import { BatchAssembler, checkSamples, identityOrder, shuffleInPlace } from './batches.js';
import { buildModel } from './build-model.js';
import { GenomeTooLargeError, InvalidGenomeError, ShardMismatchError } from './errors.js';
import { evaluateModel } from './evaluate-model.js';
import { trainingCrossEntropy } from './kernels/cross-entropy.js';
import { singleSampleLatencyMs } from './measure-latency.js';
import { estimateTrainingBytes } from './memory-estimate.js';
import { modelToMessage } from './model-artifacts.js';
import { applyStart, captureCheckpoint, type StartCheckpoint } from './training-checkpoint.js';
import { augmentBatch, smoothLabels } from './augment.js';
import { evaluateRegression, meanSquaredError } from './evaluate-regression.js';
import { FusedAdamOptimizer } from './fused-adam.js';
import { CompiledDenseStep } from './compiled-dense-step.js';

/** One training of one genome. */
export interface TrainRequest {
  genome: Genome;
  data: DataShape;
  train: LabelledSamples;
  /** Scored after every epoch; null when validation is part of the training data (champions). */
  val: LabelledSamples | null;
  /** Whichever limit comes first ends training; wall time is checked between batches. */
  budget: TrainingBudget;
  /** Seeds initialisers, shuffling and dropout: same genome + seed + backend, same result. */
  seed: number;
  /** Also return the trained model's topology and weights. @default false */
  exportModel?: boolean;
  /** Called after every epoch (also a last, partial one cut short by the budget). */
  onEpoch?: (record: EpochRecord) => void;
  /** Refuse (with {@link GenomeTooLargeError}) a genome whose estimated training memory exceeds this. No cap when absent. */
  memoryCapMb?: number;
  /**
   * Weights and state to start from (a resumed attempt, a promoted candidate's own checkpoint, a
   * parent's weights). One that cannot be used gives a fresh start, said in the outcome's `start`.
   */
  start?: StartCheckpoint;
  /** Take checkpoints: every `everyEpochs` epochs (0: none) and, with `final`, at the end. */
  checkpoints?: { everyEpochs: number; final: boolean; runId: string; evaluationId: string };
  /** Receives each checkpoint; training waits for it before the next epoch. */
  onCheckpoint?: (bytes: Uint8Array, epoch: number, final: boolean) => void | Promise<void>;
  /**
   * With a validation split: end with the weights of the epoch of best validation accuracy (the
   * earliest among equals), and report that epoch's scores. @default false (the last epoch's)
   */
  keepBestWeights?: boolean;
  /** Train the whole budget: validation only scores, the genome's `patience` stops nothing (a champion's held-back check). @default false */
  fixedLength?: boolean;
}

/** What one training yields: an evaluation result without the ids the worker adds. */
export type TrainOutcome = Omit<EvaluationResult, 'schemaVersion' | 'evaluationId' | 'workerId'>;

/** Losses above this (or not finite) mean training diverged; they are reported as this value. */
export const DIVERGED_LOSS = 1e6;
const finiteLoss = (v: number) => (Number.isFinite(v) && v < DIVERGED_LOSS ? Math.max(0, v) : DIVERGED_LOSS);

/** Sets the rate the next `minimize` uses (SGD keeps it as a tensor; Adam and RMSprop read the field). */
function setLearningRate(optimizer: tf.Optimizer, lr: number): void {
  // Duck-typed: the library's optimizer classes answer `instanceof` by their fields, so every
  // optimizer with a learning rate passes as an SGD one.
  const o = optimizer as unknown as { learningRate: number; setLearningRate?: (lr: number) => void };
  if (o.learningRate === lr) return;
  if (typeof o.setLearningRate === 'function') o.setLearningRate(lr);
  else o.learningRate = lr;
}

/** Epochs since the lowest validation loss of `history` (0 when the last epoch has it). */
function epochsSinceBestLoss(history: readonly EpochRecord[]): number {
  let best = Infinity;
  let at = -1;
  history.forEach((r, i) => {
    if (r.valLoss !== null && r.valLoss < best) {
      best = r.valLoss;
      at = i;
    }
  });
  return at < 0 ? 0 : history.length - 1 - at;
}

/** The optimizer a genome's training gene names (exported for the step benchmarks). */
export function makeOptimizer(name: OptimizerName, learningRate: number): tf.Optimizer {
  switch (name) {
    case 'adam':
      // The library's Adam, one kernel per weight tensor on wasm (fused-adam.ts).
      return new FusedAdamOptimizer(learningRate, 0.9, 0.999);
    case 'sgd':
      return tf.train.sgd(learningRate);
    case 'rmsprop':
      return tf.train.rmsprop(learningRate);
  }
}

/**
 * Trains a genome on the current backend (call {@link initBackend} first) within its budget and
 * scores it on the validation split. Throws {@link InvalidGenomeError} or
 * {@link GenomeTooLargeError} (both "do not retry") before any training. Every tensor it makes
 * (model, optimizer state, batches) is disposed before it returns or throws.
 */
export async function trainGenome(request: TrainRequest): Promise<TrainOutcome> {
  const { genome, data, train, val, budget } = request;
  const analyzed = analyzeGenome(genome, data);
  if (!analyzed.ok) throw new InvalidGenomeError(analyzed.issues);
  const analysis = analyzed.analysis;
  const { batchSize, optimizer: optimizerName, learningRate, schedule, augment, labelSmoothing, patience } = genome.training;
  if (request.memoryCapMb != null) {
    const estimate = estimateTrainingBytes(analysis, data, { batchSize, optimizer: optimizerName, samples: train.count + (val?.count ?? 0) });
    const cap = request.memoryCapMb * 2 ** 20;
    if (estimate.total > cap) throw new GenomeTooLargeError(estimate.total, cap);
  }
  const sampleLength = sampleSize(data.inputShape);
  const target = data.target;
  checkSamples(train, sampleLength, data.numClasses, 'train', !!target);
  if (val) checkSamples(val, sampleLength, data.numClasses, 'validation', !!target);
  // Regression: accuracy is the fitness 1 / (1 + standardised RMSE) and loss the mean squared error.
  const score = (samples: LabelledSamples) => (target ? evaluateRegression(model, samples) : evaluateModel(model, samples));
  if (train.count === 0) throw new ShardMismatchError('the train split is empty; a dataset needs training samples');
  const backend = currentBackend();

  const started = performance.now();
  let peakRss = process.memoryUsage.rss();
  let model = buildModel(genome, data, request.seed);
  let optimizer = makeOptimizer(optimizerName, learningRate);
  const hash = genomeHash(genome);
  const begun = await applyStart(model, optimizer, request.start, { genomeHash: hash, seed: request.seed, optimizer: optimizerName, trainCount: train.count });
  if (begun.rebuild) {
    model.dispose();
    optimizer.dispose();
    model = buildModel(genome, data, request.seed);
    optimizer = makeOptimizer(optimizerName, learningRate);
  }
  const resumed = begun.progress;
  const random = resumed ? restoreRandom(resumed.shuffleState) : createRandom(`shuffle ${request.seed}`);
  const order = resumed ? resumed.order : identityOrder(train.count);
  const assembler = new BatchAssembler(train, sampleLength, data.numClasses, Math.min(batchSize, train.count));
  const history: EpochRecord[] = resumed ? [...resumed.history] : [];
  // The schedule's clock: optimizer steps over the job's whole epoch budget, continued on resume.
  const stepsPerEpoch = Math.ceil(train.count / batchSize);
  const totalSteps = budget.epochs * stepsPerEpoch;
  let step = (resumed?.epoch ?? 0) * stepsPerEpoch;
  const augmenting = augment && data.inputShape.length === 3 && (augment.shift > 0 || augment.flip) ? augment : null;
  const scratch = augmenting ? new Float32Array(sampleLength) : null;
  let best: { epoch: number; valAccuracy: number; valLoss: number | null; weights: tf.Tensor[] | null } | null = null;
  let samplesSeen = resumed?.samplesSeen ?? 0;
  let stepSeconds = resumed?.stepSeconds ?? 0;
  const checkpoint = async (epoch: number, final: boolean) => {
    const c = request.checkpoints;
    if (!c || !request.onCheckpoint) return;
    if (final ? !c.final : !(c.everyEpochs > 0 && epoch % c.everyEpochs === 0)) return;
    const identity = { runId: c.runId, evaluationId: c.evaluationId, genomeHash: hash, seed: request.seed, backend, optimizer: optimizerName };
    const bytes = await captureCheckpoint(model, optimizer, identity, { epoch, final, samplesSeen, stepSeconds, history, order, shuffle: random });
    await request.onCheckpoint(bytes, epoch, final);
  };
  let stoppedBy: TrainOutcome['stoppedBy'] = 'epochs';
  let diverged = false;
  // A chain of dense layers trains without the tape (compiled-dense-step.ts); null: every other genome.
  const compiled = CompiledDenseStep.plan(model, genome, data, Math.min(batchSize, train.count));

  /** An epoch's running totals (loss, and correct answers or a regression's squared errors): tensors from the tape's steps (read once at the epoch's end), numbers from the compiled ones. */
  type EpochSums = { loss: tf.Scalar; correct: tf.Scalar; plainLoss: number; plainTally: number };
  const stepBatch = (start: number, size: number, sums: EpochSums) => {
    const batch = assembler.batch(order, start, size);
    if (augmenting) augmentBatch(batch.features, size, data.inputShape, augmenting, random, scratch!);
    if (labelSmoothing && !target) smoothLabels(batch.oneHot, size, data.numClasses, labelSmoothing);
    setLearningRate(optimizer, learningRateAt(learningRate, schedule, { step, totalSteps, stepsPerEpoch }));
    step++;
    if (compiled) {
      const done = compiled.step(batch.features, target ? batch.targets : batch.oneHot, batch.labels, size, optimizer);
      sums.plainLoss += done.loss * size;
      sums.plainTally += done.tally;
      return;
    }
    const kept: { correct?: tf.Scalar } = {};
    const x = tf.tensor(batch.features, [size, ...data.inputShape]);
    const y = target ? tf.tensor2d(batch.targets, [size, 1]) : tf.tensor2d(batch.oneHot, [size, data.numClasses]);
    const labels = tf.tensor1d(batch.labels, 'int32');
    try {
      const cost = optimizer.minimize(() => {
        const out = model.apply(x, { training: true }) as tf.Tensor;
        // Regression sums squared errors where classification counts correct answers.
        kept.correct = tf.keep(target ? (tf.sum(tf.square(tf.sub(out, y))) as tf.Scalar) : (tf.sum(tf.cast(tf.equal(tf.argMax(out, -1), labels), 'float32')) as tf.Scalar));
        let loss = !target ? trainingCrossEntropy(out, y) : target.loss === 'huber' ? (tf.losses.huberLoss(y, out, undefined, 1) as tf.Scalar) : meanSquaredError(out, y);
        for (const penalty of model.calculateLosses()) loss = tf.add(loss, penalty) as tf.Scalar;
        return loss;
      }, true)!;
      const loss = tf.tidy(() => tf.add(sums.loss, tf.mul(cost, size)) as tf.Scalar);
      const hits = tf.add(sums.correct, kept.correct!) as tf.Scalar;
      tf.dispose([cost, sums.loss, sums.correct]);
      sums.loss = loss;
      sums.correct = hits;
    } finally {
      tf.dispose([x, y, labels]);
      if (kept.correct) tf.dispose(kept.correct);
    }
  };

  try {
    // Counted over the whole training: a resumed one stops where the uninterrupted one would.
    const maxSamples = budget.maxSamples ?? Infinity;
    const deadline = started + budget.maxSeconds * 1000;
    let trainLoss = 0;
    let trainAccuracy = 0;
    epochs: for (let epoch = (resumed?.epoch ?? 0) + 1; epoch <= budget.epochs; epoch++) {
      const epochStart = performance.now();
      shuffleInPlace(order, random);
      const sums: EpochSums = { loss: tf.scalar(0), correct: tf.scalar(0), plainLoss: 0, plainTally: 0 };
      let epochSamples = 0;
      let cut: TrainOutcome['stoppedBy'] | null = null;
      try {
        for (let start = 0; start < train.count; start += batchSize) {
          if (performance.now() >= deadline) {
            cut = 'seconds';
            break;
          }
          if (samplesSeen >= maxSamples) {
            cut = 'samples';
            break;
          }
          const size = Math.min(batchSize, train.count - start, maxSamples - samplesSeen);
          const t0 = performance.now();
          stepBatch(start, size, sums);
          stepSeconds += (performance.now() - t0) / 1000;
          samplesSeen += size;
          epochSamples += size;
          peakRss = Math.max(peakRss, process.memoryUsage.rss());
        }
        // A budget that runs out exactly at an epoch's end still counts as stopping by it.
        if (!cut && epoch < budget.epochs) {
          if (samplesSeen >= maxSamples) cut = 'samples';
          else if (performance.now() >= deadline) cut = 'seconds';
        }
        if (epochSamples > 0) {
          trainLoss = finiteLoss((sums.loss.dataSync()[0]! + sums.plainLoss) / epochSamples);
          const perSample = (sums.correct.dataSync()[0]! + sums.plainTally) / epochSamples;
          trainAccuracy = target ? regressionFitness(Math.sqrt(perSample)) : perSample;
        }
      } finally {
        tf.dispose([sums.loss, sums.correct]);
      }
      if (epochSamples > 0) {
        const scored = val ? score(val) : null;
        peakRss = Math.max(peakRss, process.memoryUsage.rss());
        const record: EpochRecord = {
          epoch,
          trainLoss,
          trainAccuracy,
          valLoss: scored ? finiteLoss(scored.loss) : null,
          valAccuracy: scored ? scored.accuracy : null,
          seconds: (performance.now() - epochStart) / 1000,
        };
        history.push(record);
        request.onEpoch?.(record);
        if (scored && (best === null || scored.accuracy > best.valAccuracy)) {
          if (best?.weights) tf.dispose(best.weights);
          best = { epoch, valAccuracy: scored.accuracy, valLoss: record.valLoss, weights: request.keepBestWeights ? model.getWeights().map((w) => w.clone()) : null };
        }
        if (!cut && patience && val && !request.fixedLength && epoch < budget.epochs && epochsSinceBestLoss(history) >= patience) cut = 'patience';
        // Let the event loop run (a child process flushes its epoch message to the parent here).
        await new Promise<void>((resolve) => setImmediate(resolve));
        if (trainLoss >= DIVERGED_LOSS) diverged = true;
        await checkpoint(epoch, epoch === budget.epochs || cut !== null || diverged);
      }
      if (cut) {
        stoppedBy = cut;
        break epochs;
      }
      if (diverged) break;
    }
    const last = history[history.length - 1];
    const kept = best?.weights ? best : null;
    if (kept) model.setWeights(kept.weights!);
    const outcome: TrainOutcome = {
      backend,
      valAccuracy: kept ? kept.valAccuracy : (last?.valAccuracy ?? null),
      valLoss: kept ? kept.valLoss : (last?.valLoss ?? null),
      trainLoss: last?.trainLoss ?? 0,
      trainAccuracy: last?.trainAccuracy ?? 0,
      paramCount: analysis.params,
      flops: analysis.flops,
      epochsRun: history.length,
      samplesSeen,
      trainSeconds: (performance.now() - started) / 1000,
      samplesPerSecond: stepSeconds > 0 ? samplesSeen / stepSeconds : 0,
      peakRssBytes: peakRss,
      stoppedBy,
      ...(best ? { bestEpoch: best.epoch } : {}),
      history,
      start: begun.start,
    };
    if (val && !last) {
      // The budget ended before the first batch: score the untrained model so the result is honest.
      const scored = score(val);
      outcome.valAccuracy = scored.accuracy;
      outcome.valLoss = finiteLoss(scored.loss);
    }
    if (val && target) {
      const { rmse, mae, r2 } = evaluateRegression(model, val).metrics;
      outcome.valRegression = Number.isFinite(rmse) ? { rmse: rmse * target.std, mae: mae * target.std, r2 } : { rmse: DIVERGED_LOSS, mae: DIVERGED_LOSS, r2: -DIVERGED_LOSS };
    }
    // Measured after the training time was taken, so it does not count towards it.
    outcome.latencyMsPerSample = singleSampleLatencyMs(model, val ?? train);
    if (request.exportModel) outcome.model = await modelToMessage(model);
    return outcome;
  } finally {
    if (best?.weights) tf.dispose(best.weights);
    compiled?.dispose();
    optimizer.dispose();
    model.dispose();
  }
}
