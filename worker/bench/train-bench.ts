/**
 * Training-speed benchmark: trains the reference genomes of the training-engine issue on every
 * available backend, prints a table, then (as its last line) one JSON object with every figure.
 *
 *   npm run bench:train                # all backends, a few minutes at most
 *   npm run bench:train -- --quick     # fewer batches (a smoke run)
 *
 * Training FLOPs are taken as 3 × the forward FLOPs analyzeGenome counts (forward, input gradient,
 * weight gradient), the usual rule of thumb. Synthetic data: speed does not depend on the values.
 */
import { cpus, loadavg } from 'node:os';
import * as tf from '@tensorflow/tfjs';
import { analyzeGenome, type BackendName, type DataShape, type Genome } from '@netbreeder/shared-types';
import { initBackend } from '../src/training/backend.js';
import { refCnn, refCnnBn, refMlp, refSkipBn } from '../src/training/reference-genomes.js';
import { syntheticSamples } from '../src/training/synthetic-samples.js';
import { trainGenome } from '../src/training/train-genome.js';

const quick = process.argv.includes('--quick');
const IMAGE: DataShape = { inputShape: [28, 28, 1], numClasses: 10 };
const FLAT: DataShape = { inputShape: [784], numClasses: 10 };
const GENOMES: Array<{ name: string; genome: Genome; data: DataShape }> = [
  { name: 'ref-mlp', genome: refMlp(), data: FLAT },
  { name: 'ref-cnn', genome: refCnn(), data: IMAGE },
  { name: 'skip-bn', genome: refSkipBn(), data: IMAGE },
  { name: 'cnn-bn', genome: refCnnBn(), data: IMAGE },
];
/**
 * Batches measured per backend. wasm and tensorflow get one warm-up batch first (operator set-up,
 * first allocations); the cpu backend, about 10 s per convolutional batch, is measured cold.
 */
const BATCHES: Record<BackendName, number> = quick ? { tensorflow: 10, wasm: 10, cpu: 1 } : { tensorflow: 60, wasm: 60, cpu: 2 };
const CPU_MLP_BATCHES = quick ? 3 : 20;

interface Row {
  genome: string;
  backend: BackendName;
  batchSize: number;
  samples: number;
  /** Wall clock, training batches only (trainGenome's own figure). */
  samplesPerSecond: number;
  /** Per second of this process's CPU time: what one idle core would give, on a shared machine. */
  samplesPerCpuSecond: number;
  gflopsPerSecond: number;
  trainMflopsPerSample: number;
}

async function available(): Promise<BackendName[]> {
  const names: BackendName[] = [];
  const native = await initBackend({ prefer: ['tensorflow'] }).then(
    () => true,
    () => false,
  );
  // initBackend is idempotent per process; the others are switched to directly.
  if (native) names.push('tensorflow');
  if (!native) await initBackend({ prefer: ['wasm'] });
  else {
    await import('@tensorflow/tfjs-backend-wasm');
    const { registerWasmTrainingKernels } = await import('../src/training/kernels/register-wasm-kernels.js');
    registerWasmTrainingKernels();
  }
  if (await tf.setBackend('wasm')) names.push('wasm');
  names.push('cpu');
  return names;
}

async function measure(name: string, genome: Genome, data: DataShape, backend: BackendName): Promise<Row> {
  await tf.setBackend(backend);
  const batchSize = genome.training.batchSize;
  const batches = backend === 'cpu' && name === 'ref-mlp' ? CPU_MLP_BATCHES : BATCHES[backend];
  const train = syntheticSamples(data, batchSize * batches, 1);
  const budget = (n: number) => ({ epochs: 1, maxSeconds: 600, maxSamples: n * batchSize });
  if (backend !== 'cpu') await trainGenome({ genome, data, train, val: null, budget: budget(1), seed: 1 }); // warm-up
  const cpu0 = process.cpuUsage();
  const outcome = await trainGenome({ genome, data, train, val: null, budget: budget(batches), seed: 1 });
  const cpu = process.cpuUsage(cpu0);
  const cpuSeconds = (cpu.user + cpu.system) / 1e6;
  const analysis = analyzeGenome(genome, data);
  if (!analysis.ok) throw new Error(`${name} does not fit ${data.inputShape.join('×')}`);
  const trainFlops = 3 * analysis.analysis.flops;
  return {
    genome: name,
    backend,
    batchSize,
    samples: outcome.samplesSeen,
    samplesPerSecond: outcome.samplesPerSecond,
    samplesPerCpuSecond: outcome.samplesSeen / cpuSeconds,
    gflopsPerSecond: (outcome.samplesPerSecond * trainFlops) / 1e9,
    trainMflopsPerSample: trainFlops / 1e6,
  };
}

const backends = await available();
const rows: Row[] = [];
for (const backend of backends) for (const g of GENOMES) rows.push(await measure(g.name, g.genome, g.data, backend));

const ratio = (row: Row) => {
  const cpu = rows.find((r) => r.genome === row.genome && r.backend === 'cpu');
  return cpu ? row.samplesPerSecond / cpu.samplesPerSecond : null;
};
const pad = (s: string, n: number) => s.padEnd(n);
console.log(`load average ${loadavg().map((l) => l.toFixed(2)).join(' ')} on ${cpus().length} cores (others' load slows wall-clock figures; per-CPU-second figures less so)`);
console.log(`${pad('genome', 9)} ${pad('backend', 11)} ${pad('batch', 6)} ${pad('samples', 8)} ${pad('samples/s', 10)} ${pad('per CPU-s', 10)} ${pad('GFLOP/s', 8)} ${pad('MFLOP/sample', 13)} × cpu`);
for (const r of rows) {
  const x = ratio(r);
  console.log(
    `${pad(r.genome, 9)} ${pad(r.backend, 11)} ${pad(String(r.batchSize), 6)} ${pad(String(r.samples), 8)} ${pad(r.samplesPerSecond.toFixed(1), 10)} ${pad(r.samplesPerCpuSecond.toFixed(1), 10)} ${pad(r.gflopsPerSecond.toFixed(2), 8)} ${pad(r.trainMflopsPerSample.toFixed(2), 13)} ${x == null ? '' : x.toFixed(1)}`,
  );
}
console.log(
  JSON.stringify({
    bench: 'train',
    node: process.version,
    quick,
    loadAverage: loadavg(),
    results: rows.map((r) => ({ ...r, samplesPerSecond: +r.samplesPerSecond.toFixed(2), samplesPerCpuSecond: +r.samplesPerCpuSecond.toFixed(2), gflopsPerSecond: +r.gflopsPerSecond.toFixed(3), ratioToCpu: ratio(r) == null ? null : +ratio(r)!.toFixed(2) })),
  }),
);
