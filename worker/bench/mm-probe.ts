/**
 * What the first dense layer's matrix products of ref-mlp cost on wasm, and what packing a new
 * weight tensor adds (the backend caches a packed copy per tensor; training makes a new weight
 * tensor every step). `npx tsx --conditions=source worker/bench/mm-probe.ts`; see ENGINE.md.
 */
import * as tf from '@tensorflow/tfjs';
import { initBackend } from '../src/training/backend.js';
import { matMulOptions } from '../src/training/kernels/batch-mat-mul.js';
await initBackend({ prefer: ['wasm'] });
matMulOptions.direct = false; // the backend's products first, as measured before our kernels
const x = tf.randomUniform([64, 784]);
const time = (label: string, f: () => tf.Tensor, n = 200) => {
  for (let i = 0; i < 10; i++) f().dispose();
  const t0 = performance.now();
  for (let i = 0; i < n; i++) f().dispose();
  console.log(label, ((performance.now() - t0) / n).toFixed(3), 'ms');
};
const W = tf.randomUniform([784, 256]);
time('x·W same W', () => tf.matMul(x, W));
time('x·W fresh W (incl. W copy)', () => { const w = W.add(0); const y = tf.matMul(x, w); w.dispose(); return y; });
time('W copy alone', () => W.add(0));
time('swapped fresh: (Wt·xt)t', () => tf.tidy(() => { const w = W.add(0); const wt = w.transpose(); const xt = x.transpose(); return tf.matMul(wt, xt).transpose(); }));
time('transpose W alone', () => tf.tidy(() => W.add(0).transpose()));
const dy = tf.randomUniform([64, 256]);
time('dW = xT·dy fresh dy', () => tf.tidy(() => { const d = dy.add(0); return tf.matMul(x.transpose(), d); }));
time('dW = xT·dy (transposeA flag) fresh dy', () => tf.tidy(() => { const d = dy.add(0); return tf.matMul(x, d, true, false); }));

// The same three products of training by our kernels (worker/native/matmul.c, which pack nothing)
// and by the backend's route, each with a fresh operand as in training, interleaved.
const fresh: Array<[string, () => tf.Tensor]> = [
  ['x·W, fresh W', () => tf.tidy(() => tf.matMul(x, W.add(0)))],
  ['xT·dy, fresh dy', () => tf.tidy(() => tf.matMul(x, dy.add(0), true, false))],
  ['dy·WT, fresh W', () => tf.tidy(() => tf.matMul(dy, W.add(0), false, true))],
];
for (let round = 0; round < 3; round++)
  for (const [label, f] of fresh)
    for (const direct of [true, false]) {
      matMulOptions.direct = direct;
      time(`round ${round} ${label} (incl. the copy), ${direct ? 'ours' : 'backend'}`, f, 100);
    }
