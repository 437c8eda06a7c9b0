import * as tf from '@tensorflow/tfjs';
import {
  decodeCheckpoint,
  encodeCheckpoint,
  restoreRandom,
  type BackendName,
  type CheckpointArray,
  type CheckpointHeader,
  type EpochRecord,
  type OptimizerName,
  type Random,
  type RandomState,
  type TrainingStart,
} from '@netbreeder/shared-types';
import { TrainingError } from './errors.js';
import { SeededDropout } from './seeded-dropout.js';
import { planWeightCopy } from './weight-inheritance.js';

/** Which training a checkpoint belongs to (written into its header). */
export interface CheckpointIdentity {
  runId: string;
  evaluationId: string;
  genomeHash: string;
  seed: number;
  backend: BackendName;
  optimizer: OptimizerName;
}

/** Where a training stands at the end of an epoch: what a checkpoint must hold besides weights and optimizer slots. */
export interface TrainingProgress {
  epoch: number;
  final: boolean;
  samplesSeen: number;
  stepSeconds: number;
  history: EpochRecord[];
  order: Int32Array;
  shuffle: Random;
}

/** A checkpoint offered to a training: its bytes (null when they could not be fetched or verified, with `note` saying why). */
export interface StartCheckpoint {
  kind: 'resumed' | 'own-checkpoint' | 'parent-weights';
  bytes: Uint8Array | null;
  sha256: string;
  /** The epoch its reference names (the file's header is what counts once it is read). */
  epoch?: number;
  fromEvaluationId: string;
  note?: string;
}

/** What a training continues from after {@link applyStart}. */
export interface StartState {
  start: TrainingStart;
  /** Present when the checkpoint's progress is continued (resumed, own checkpoint). */
  progress?: Omit<TrainingProgress, 'final' | 'shuffle'> & { shuffleState: RandomState };
  /** True when restoring failed after it had begun writing: the caller must build a fresh model and optimizer. */
  rebuild?: boolean;
}

/** A checkpoint that does not fit the training it was offered to (caught below: the training starts from epoch 0). */
class CheckpointMismatchError extends TrainingError {
  constructor(message: string) {
    super(message, 'NB_CHECKPOINT_MISMATCH');
  }
}

const dropoutLayers = (model: tf.LayersModel) => model.layers.filter((l): l is SeededDropout => l instanceof SeededDropout);
const weightArrays = (model: tf.LayersModel): CheckpointArray[] =>
  model.weights.map((w) => ({ group: 'weight', name: w.originalName, shape: [...(w.shape as number[])], values: new Float32Array(w.read().dataSync()) }));

/** Adam's running powers of beta1 and beta2 (see the `optimizer-extra` group of the header). */
const adamPowers = (optimizer: tf.Optimizer): Record<'accBeta1' | 'accBeta2', tf.Variable> | null => {
  const o = optimizer as unknown as { accBeta1?: tf.Variable; accBeta2?: tf.Variable };
  return o.accBeta1 instanceof tf.Variable && o.accBeta2 instanceof tf.Variable ? { accBeta1: o.accBeta1, accBeta2: o.accBeta2 } : null;
};

/** Encodes the whole training state at the end of an epoch. */
export async function captureCheckpoint(model: tf.LayersModel, optimizer: tf.Optimizer, id: CheckpointIdentity, p: TrainingProgress): Promise<Uint8Array> {
  const arrays = weightArrays(model);
  const slots = await optimizer.getWeights();
  try {
    for (const s of slots) {
      arrays.push({ group: 'optimizer', name: s.name, shape: [...s.tensor.shape], values: s.tensor.dtype === 'int32' ? new Int32Array(s.tensor.dataSync()) : new Float32Array(s.tensor.dataSync()) });
    }
  } finally {
    // getWeights makes a fresh scalar of the iteration count; the slots are the optimizer's own variables.
    tf.dispose(slots.filter((s) => !(s.tensor instanceof tf.Variable)).map((s) => s.tensor));
  }
  const powers = adamPowers(optimizer);
  if (powers) for (const [name, v] of Object.entries(powers)) arrays.push({ group: 'optimizer-extra', name, shape: [], values: new Float32Array(v.dataSync()) });
  arrays.push({ group: 'order', name: 'order', shape: [p.order.length], values: p.order.slice() });
  const header: Omit<CheckpointHeader, 'tensors' | 'formatVersion'> = {
    ...id,
    epoch: p.epoch,
    final: p.final,
    rng: { shuffle: [...p.shuffle.state()] as [number, number, number, number], dropout: dropoutLayers(model).map((l) => ({ layer: l.name, state: [...l.randomState()] as [number, number, number, number] })) },
    samplesSeen: p.samplesSeen,
    stepSeconds: p.stepSeconds,
    history: p.history,
  };
  return encodeCheckpoint(header, arrays);
}

/**
 * Puts a freshly built model and optimizer in the state the offered checkpoint describes. Nothing
 * is changed unless the whole checkpoint fits (every check runs before the first write); a
 * checkpoint that is missing, unreadable or does not fit gives a fresh start whose `note` says why.
 */
export async function applyStart(
  model: tf.LayersModel,
  optimizer: tf.Optimizer,
  offered: StartCheckpoint | undefined,
  expect: { genomeHash: string; seed: number; optimizer: OptimizerName; trainCount: number },
): Promise<StartState> {
  const total = model.weights.length;
  const fresh = (note: string | null): StartState => ({
    start: { kind: 'fresh', fromEpoch: 0, checkpointSha256: null, fromEvaluationId: null, copiedWeights: 0, totalWeights: total, note },
  });
  if (!offered) return fresh(null);
  const label = `${offered.kind} checkpoint ${offered.sha256.slice(0, 12)} (from ${offered.fromEvaluationId})`;
  if (!offered.bytes) return fresh(`${label} not used: ${offered.note ?? 'not available'}; trained from epoch 0`);
  let writing = false;
  try {
    const { header, arrays } = decodeCheckpoint(offered.bytes);
    const weights = arrays.filter((a) => a.group === 'weight');
    const base = { checkpointSha256: offered.sha256, fromEvaluationId: offered.fromEvaluationId, totalWeights: total, note: null };
    if (offered.kind === 'parent-weights') {
      const plan = planWeightCopy(model.weights.map((w) => ({ name: w.originalName, shape: w.shape as number[] })), weights);
      writing = true;
      for (const [t, s] of plan.copies) {
        const value = tf.tensor(weights[s]!.values, weights[s]!.shape);
        model.weights[t]!.write(value);
        value.dispose();
      }
      return { start: { ...base, kind: 'parent-weights', fromEpoch: 0, copiedWeights: plan.copied } };
    }
    // Resuming (or continuing a lower rung) needs the very same network and training genes.
    if (header.genomeHash !== expect.genomeHash) throw new CheckpointMismatchError(`it belongs to genome ${header.genomeHash.slice(0, 12)}, not ${expect.genomeHash.slice(0, 12)}`);
    if (offered.kind === 'resumed' && header.seed !== expect.seed) throw new CheckpointMismatchError(`it was trained with seed ${header.seed}, not ${expect.seed}`);
    if (header.optimizer !== expect.optimizer) throw new CheckpointMismatchError(`it holds ${header.optimizer} state, the genome trains with ${expect.optimizer}`);
    if (weights.length !== total || model.weights.some((w, i) => w.originalName !== weights[i]!.name || w.shape.join() !== weights[i]!.shape.join())) {
      throw new CheckpointMismatchError('its weights do not match the model built from the genome');
    }
    const order = arrays.find((a) => a.group === 'order');
    if (!order || order.values.length !== expect.trainCount || !(order.values instanceof Int32Array)) throw new CheckpointMismatchError(`its sample order is not one of ${expect.trainCount} training samples`);
    const dropout = dropoutLayers(model);
    const dropoutStates = new Map(header.rng.dropout.map((d) => [d.layer, d.state]));
    if (dropout.some((l) => !dropoutStates.has(l.name))) throw new CheckpointMismatchError('it lacks the random state of a dropout layer');

    writing = true;
    const tensors = weights.map((w) => tf.tensor(w.values, w.shape));
    model.setWeights(tensors);
    tf.dispose(tensors);
    const slots = arrays.filter((a) => a.group === 'optimizer').map((a) => ({ name: a.name, tensor: tf.tensor(a.values, a.shape, a.values instanceof Int32Array ? 'int32' : 'float32') }));
    if (slots.length) await optimizer.setWeights(slots);
    tf.dispose(slots.map((s) => s.tensor));
    const powers = adamPowers(optimizer);
    for (const extra of arrays.filter((a) => a.group === 'optimizer-extra')) {
      const v = powers?.[extra.name as 'accBeta1' | 'accBeta2'];
      if (v) tf.tidy(() => v.assign(tf.scalar(extra.values[0]!)));
    }
    for (const l of dropout) l.restoreRandomState(dropoutStates.get(l.name)!);
    restoreRandom(header.rng.shuffle); // checks the state is usable before the caller relies on it
    return {
      start: { ...base, kind: offered.kind, fromEpoch: header.epoch, copiedWeights: total },
      progress: { epoch: header.epoch, samplesSeen: header.samplesSeen, stepSeconds: header.stepSeconds, history: header.history, order: order.values, shuffleState: header.rng.shuffle },
    };
  } catch (err) {
    return { ...fresh(`${label} not used: ${(err as Error).message}; trained from epoch 0`), rebuild: writing };
  }
}
