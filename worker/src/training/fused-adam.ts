import * as tf from '@tensorflow/tfjs';
import { ADAM_UPDATE, type AdamUpdateAttrs } from './kernels/adam-update.js';

/** The library optimizer's state this class reads (private and protected there). */
interface AdamState {
  accBeta1: tf.Variable;
  accBeta2: tf.Variable;
  beta1: number;
  beta2: number;
  epsilon: number;
  learningRate: number;
  accumulatedFirstMoment: Array<{ originalName: string; variable: tf.Variable } | undefined>;
  accumulatedSecondMoment: Array<{ originalName: string; variable: tf.Variable } | undefined>;
  incrementIterations(): void;
}

/**
 * The library's Adam optimizer whose update of each weight tensor is one kernel of ours
 * (`NetbreederAdamUpdate`, kernels/adam-update.ts) where that kernel is registered (wasm), and
 * the library's own update everywhere else. Same state (moments named `<weight>/m`, `/v`, the
 * running powers of β), so checkpoints and `getWeights`/`setWeights` are the library's; the same
 * update, rounded once instead of after every operation (within 1e-5 of the library's after several
 * steps; fused-adam.test.ts).
 */
export class FusedAdamOptimizer extends tf.AdamOptimizer {
  static override get className(): string {
    return 'Adam';
  }

  override applyGradients(variableGradients: Parameters<tf.AdamOptimizer['applyGradients']>[0]): void {
    if (tf.getBackend() !== 'wasm' || !tf.getKernel(ADAM_UPDATE, 'wasm')) {
      super.applyGradients(variableGradients);
      return;
    }
    const s = this as unknown as AdamState;
    const list = Array.isArray(variableGradients) ? variableGradients : null;
    const names = list ? list.map((v) => v.name) : Object.keys(variableGradients);
    const [accBeta1, accBeta2] = [s.accBeta1.dataSync()[0]!, s.accBeta2.dataSync()[0]!];
    const attrs: AdamUpdateAttrs = {
      beta1: s.beta1,
      beta2: s.beta2,
      // As the library computes them: sub(1, accBeta) on float32 scalars.
      oneMinusAccBeta1: Math.fround(1 - accBeta1),
      oneMinusAccBeta2: Math.fround(1 - accBeta2),
      epsilon: s.epsilon,
      learningRate: s.learningRate,
    };
    tf.tidy(() => {
      names.forEach((name, i) => {
        const value = tf.engine().registeredVariables[name]!;
        const moment = (slot: 'm' | 'v') => ({ originalName: `${name}/${slot}`, variable: tf.tidy(() => tf.zerosLike(value).variable(false)) });
        s.accumulatedFirstMoment[i] ??= moment('m');
        s.accumulatedSecondMoment[i] ??= moment('v');
        const gradient = list ? list[i]!.tensor : (variableGradients as Record<string, tf.Tensor | undefined>)[name];
        if (gradient == null) return;
        const m = s.accumulatedFirstMoment[i]!.variable;
        const v = s.accumulatedSecondMoment[i]!.variable;
        const [newValue, newM, newV] = tf.engine().runKernel(ADAM_UPDATE, { value, m, v, gradient }, attrs as unknown as tf.NamedAttrMap) as tf.Tensor[];
        m.assign(newM!);
        v.assign(newV!);
        value.assign(newValue!);
      });
      s.accBeta1.assign(tf.mul(s.accBeta1, s.beta1));
      s.accBeta2.assign(tf.mul(s.accBeta2, s.beta2));
    });
    s.incrementIterations();
  }
}
