/**
 * Per-kernel profile of training steps (tf.profile): where one batch's time goes, for the
 * benchmark's reference genomes on wasm. `npx tsx --conditions=source worker/bench/profile-step.ts [ref-mlp|ref-cnn|skip-bn|cnn-bn]`.
 * Prints kernels by total time, and the wall and CPU time of the steps outside the profiler.
 */
import * as tf from '@tensorflow/tfjs';
import type { DataShape, Genome } from '@netbreeder/shared-types';
import { initBackend } from '../src/training/backend.js';
import { filterGradOptions, type FilterGradRoute } from '../src/training/kernels/conv-filter-gradient.js';
import { refCnn, refCnnBn, refMlp, refSkipBn } from '../src/training/reference-genomes.js';
import { fixedBatchStep } from './fixed-batch-step.js';

const which = process.argv[2] ?? 'ref-cnn';
const table: Record<string, [Genome, DataShape]> = {
  'ref-mlp': [refMlp(), { inputShape: [784], numClasses: 10 }],
  'ref-cnn': [refCnn(), { inputShape: [28, 28, 1], numClasses: 10 }],
  'skip-bn': [refSkipBn(), { inputShape: [28, 28, 1], numClasses: 10 }],
  'cnn-bn': [refCnnBn(), { inputShape: [28, 28, 1], numClasses: 10 }],
};
const [genome, data] = table[which]!;
await initBackend({ prefer: ['wasm'] });
if (process.env['ROUTE']) filterGradOptions.route = process.env['ROUTE'] as FilterGradRoute;
const batch = 64;
const step = fixedBatchStep(genome, data, batch);
for (let i = 0; i < 5; i++) step();
const steps = 20;
const t0 = performance.now();
const c0 = process.cpuUsage();
for (let i = 0; i < steps; i++) step();
const c1 = process.cpuUsage(c0);
const wall = (performance.now() - t0) / steps;
const cpu = (c1.user + c1.system) / 1000 / steps;
// The machine is shared: take each kernel's smallest total over several profiled steps, which
// filters out time stolen by other processes.
const byName = new Map<string, { ms: number; count: number; shapes: string }>();
for (let run = 0; run < 7; run++) {
  const info = await tf.profile(() => step());
  const totals = new Map<string, { ms: number; count: number; shapes: Set<string> }>();
  for (const k of info.kernels) {
    const e = totals.get(k.name) ?? { ms: 0, count: 0, shapes: new Set<string>() };
    e.ms += k.kernelTimeMs as number;
    e.count++;
    if (process.env['SHAPES']) e.shapes.add(k.inputShapes.map((s) => `[${s}]`).join(','));
    totals.set(k.name, e);
  }
  for (const [name, e] of totals) {
    const best = byName.get(name);
    if (!best || e.ms < best.ms) byName.set(name, { ms: e.ms, count: e.count, shapes: [...e.shapes].join(' ') });
  }
}
const total = [...byName.values()].reduce((a, e) => a + e.ms, 0);
console.log(`${which}: step ${wall.toFixed(1)} ms wall, ${cpu.toFixed(1)} ms CPU (${((batch / cpu) * 1000).toFixed(0)} samples per CPU-second); profiled kernels ${total.toFixed(1)} ms`);
for (const [name, e] of [...byName].sort((a, b) => b[1].ms - a[1].ms).slice(0, 25)) console.log(`${name.padEnd(36)} ${e.ms.toFixed(2).padStart(8)} ms  ×${e.count} ${e.shapes}`);
