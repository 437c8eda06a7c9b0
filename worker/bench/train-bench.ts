/**
 * Training-speed benchmark: trains the reference genomes of the training-engine issue on every
 * available backend, prints a table, then (as its last line) one JSON object with every figure.
 *
 *   npm run bench:train                       # all backends, a few minutes at most
 *   npm run bench:train -- --quick            # fewer batches (a smoke run)
 *   npm run bench:train -- --backends=wasm    # only these backends (comma-separated)
 *   npm run bench:train -- --genomes=lstm-rows,gru-rows   # only these networks (comma-separated)
 *   npm run bench:train -- --batch-sizes=16,32,64,128     # each network at each batch size (name@size): the batch-size curve
 *
 * When PyTorch imports (python3 on PATH, /usr/bin/python3 or NETBREEDER_PEER_PYTHON; Debian:
 * apt-get install python3-torch), the same networks are also trained there on one thread
 * (native-peer.ts), after their parameter counts were checked equal to ours, and every row gets
 * its ratio to that native peer, the sequence networks (MNIST-sized rows: 28 steps × 28 values)
 * included.
 *
 * Training FLOPs are taken as 3 × the forward FLOPs analyzeGenome counts (forward, input gradient,
 * weight gradient), the usual rule of thumb. Synthetic data: speed does not depend on the values.
 */
import { cpus, loadavg } from 'node:os';
import * as tf from '@tensorflow/tfjs';
import { analyzeGenome, referenceGenome, type BackendName, type DataShape, type Genome } from '@netbreeder/shared-types';
import { initBackend } from '../src/training/backend.js';
import { chainGenome, refCnn, refCnnBn, refMlp, refSkipBn } from '../src/training/reference-genomes.js';
import { syntheticSamples } from '../src/training/synthetic-samples.js';
import { trainGenome } from '../src/training/train-genome.js';
import { checkSameNetworks, nativePeerAvailability, runNativePeer, type PeerNetwork } from './native-peer.js';

const quick = process.argv.includes('--quick');
const only = process.argv.find((a) => a.startsWith('--backends='))?.slice('--backends='.length).split(',');
const IMAGE: DataShape = { inputShape: [28, 28, 1], numClasses: 10 };
const FLAT: DataShape = { inputShape: [784], numClasses: 10 };
const ROWS: DataShape = { inputShape: [28, 28], numClasses: 10 };
const onlyGenomes = process.argv.find((a) => a.startsWith('--genomes='))?.slice('--genomes='.length).split(',');
const recurrent = (kind: 'lstm' | 'gru') => chainGenome([{ id: 'r', kind, units: 64, returnSequences: false }], { batchSize: 64 });
/** Every network here has a native peer (native-peer.py refuses a layer kind it does not mirror). `base`: the network's name without a batch-size suffix. */
const ALL_GENOMES: Array<{ name: string; base?: string; genome: Genome; data: DataShape }> = [
  { name: 'ref-mlp', genome: refMlp(), data: FLAT },
  { name: 'ref-cnn', genome: refCnn(), data: IMAGE },
  { name: 'skip-bn', genome: refSkipBn(), data: IMAGE },
  { name: 'cnn-bn', genome: refCnnBn(), data: IMAGE },
  { name: 'lstm-rows', genome: recurrent('lstm'), data: ROWS },
  { name: 'gru-rows', genome: recurrent('gru'), data: ROWS },
  { name: 'conv1d-ref', genome: { ...referenceGenome(ROWS), training: { ...referenceGenome(ROWS).training, batchSize: 64 } }, data: ROWS },
];
const batchSizes = process.argv.find((a) => a.startsWith('--batch-sizes='))?.slice('--batch-sizes='.length).split(',').map(Number);
if (batchSizes?.some((b) => !Number.isInteger(b) || b < 1)) throw new Error('--batch-sizes takes whole numbers ≥ 1, comma-separated');
/** Each network at each asked batch size (the same network, named `name@size`), else at its own. */
const atBatchSizes = (g: (typeof ALL_GENOMES)[number]) =>
  batchSizes ? batchSizes.map((batchSize) => ({ ...g, name: `${g.name}@${batchSize}`, base: g.name, genome: { ...g.genome, training: { ...g.genome.training, batchSize } } })) : [g];
const GENOMES = ALL_GENOMES.filter((g) => !onlyGenomes || onlyGenomes.includes(g.name)).flatMap(atBatchSizes);
/**
 * Batches measured per backend and round. wasm and tensorflow get one warm-up batch first (operator set-up,
 * first allocations); the cpu backend, about 10 s per convolutional batch, is measured cold.
 */
const BATCHES: Record<BackendName, number> = quick ? { tensorflow: 10, wasm: 10, cpu: 1 } : { tensorflow: 100, wasm: 100, cpu: 2 };
const CPU_MLP_BATCHES = quick ? 3 : 20;
/**
 * Rounds per network for the native peer, wasm and tensorflow, interleaved (peer, ours, peer,
 * ours, …); each side keeps its best round. On a shared machine a burst of others' load can halve
 * one round of either side (even per CPU-second: this VM's CPU time includes time the hypervisor
 * gives away); the best round is the least disturbed. The cpu backend is measured once.
 */
const ROUNDS = quick ? 1 : 3;

interface Row {
  genome: string;
  backend: BackendName | 'pytorch';
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
  return only ? names.filter((n) => only.includes(n)) : names;
}

async function measure({ name, base, genome, data }: (typeof ALL_GENOMES)[number], backend: BackendName): Promise<Row> {
  await tf.setBackend(backend);
  const batchSize = genome.training.batchSize;
  const batches = backend === 'cpu' && (base ?? name) === 'ref-mlp' ? CPU_MLP_BATCHES : BATCHES[backend];
  const train = syntheticSamples(data, batchSize * batches, 1);
  const budget = (n: number) => ({ epochs: 1, maxSeconds: 600, maxSamples: n * batchSize });
  const cpuOf = async (n: number) => {
    const cpu0 = process.cpuUsage();
    const outcome = await trainGenome({ genome, data, train, val: null, budget: budget(n), seed: 1 });
    const cpu = process.cpuUsage(cpu0);
    return { outcome, cpuSeconds: (cpu.user + cpu.system) / 1e6 };
  };
  // The CPU of the training loop alone, as the peer measures its own: a one-batch training's CPU
  // (model building, the first batch) subtracted from the whole one's. The cpu backend is measured
  // cold and whole (a few batches of about 10 s each).
  let setupCpu = 0;
  let perCpuSamples = 0;
  if (backend !== 'cpu') {
    await trainGenome({ genome, data, train, val: null, budget: budget(1), seed: 1 }); // warm-up
    setupCpu = (await cpuOf(1)).cpuSeconds;
    perCpuSamples = batchSize;
  }
  const { outcome, cpuSeconds: wholeCpu } = await cpuOf(batches);
  const cpuSeconds = wholeCpu - setupCpu;
  const analysis = analyzeGenome(genome, data);
  if (!analysis.ok) throw new Error(`${name} does not fit ${data.inputShape.join('×')}`);
  const trainFlops = 3 * analysis.analysis.flops;
  return {
    genome: name,
    backend,
    batchSize,
    samples: outcome.samplesSeen,
    samplesPerSecond: outcome.samplesPerSecond,
    samplesPerCpuSecond: (outcome.samplesSeen - perCpuSamples) / cpuSeconds,
    gflopsPerSecond: (outcome.samplesPerSecond * trainFlops) / 1e9,
    trainMflopsPerSample: trainFlops / 1e6,
  };
}

const backends = await available();
const pad = (s: string, n: number) => s.padEnd(n);

/** The native peer, if one runs here: parameter counts compared (and printed) before anything is timed. */
async function preparePeer(): Promise<{ python: string | null; version: string | null; threads: number | null; note: string }> {
  const availability = nativePeerAvailability();
  if (!availability.ok) return { python: null, version: null, threads: null, note: `no native peer here: ${availability.reason}` };
  await tf.setBackend(backends.includes('wasm') ? 'wasm' : backends[0]!);
  const networks = GENOMES.map(peerNetwork);
  if (!networks.length) return { python: null, version: null, threads: null, note: 'no native peer for these networks' };
  const counts = runNativePeer(availability.python, 'count', networks);
  const counted = checkSameNetworks(networks, counts);
  console.log("parameters (trainable + moving statistics), ours and the native peer's:");
  for (const c of counted) console.log(`  ${pad(c.name, 9)} ${c.engine.trainable} + ${c.engine.nonTrainable}   ${c.peer.trainable} + ${c.peer.nonTrainable}   equal`);
  return { python: availability.python, version: counts.torch, threads: counts.threads, note: `native peer: PyTorch ${counts.torch}, ${counts.threads} thread(s), same networks, batch and optimizer, timed in rounds interleaved with ours, best round kept` };
}

const peerNetwork = (g: (typeof GENOMES)[number]): PeerNetwork => ({ name: g.name, genome: g.genome, data: g.data, batches: BATCHES.wasm });

function measurePeer(python: string, g: (typeof GENOMES)[number]): Row {
  const r = runNativePeer(python, 'time', [peerNetwork(g)]).results[0]!;
  const analysis = analyzeGenome(g.genome, g.data);
  const trainFlops = analysis.ok ? 3 * analysis.analysis.flops : NaN;
  return { genome: g.name, backend: 'pytorch', batchSize: g.genome.training.batchSize, samples: r.samples!, samplesPerSecond: r.samplesPerSecond!, samplesPerCpuSecond: r.samplesPerCpuSecond!, gflopsPerSecond: (r.samplesPerSecond! * trainFlops) / 1e9, trainMflopsPerSample: trainFlops / 1e6 };
}

/** Each figure's best over the rounds (samples add up). */
function best(rounds: Row[]): Row {
  const top = (key: 'samplesPerSecond' | 'samplesPerCpuSecond') => Math.max(...rounds.map((r) => r[key]));
  const first = rounds[0]!;
  const samplesPerSecond = top('samplesPerSecond');
  return { ...first, samples: rounds.reduce((a, r) => a + r.samples, 0), samplesPerSecond, samplesPerCpuSecond: top('samplesPerCpuSecond'), gflopsPerSecond: (samplesPerSecond * first.trainMflopsPerSample) / 1e3 };
}

const peer = await preparePeer();
console.log(peer.note);
const rows: Row[] = [];
// Network by network, the peer right before our backends, so that the load others put on a
// shared machine changes as little as possible between the two sides of a ratio.
for (const g of GENOMES) {
  const rounds: Row[] = [];
  for (let round = 0; round < ROUNDS; round++) {
    if (peer.python) rounds.push(measurePeer(peer.python, g));
    for (const backend of backends) if (backend !== 'cpu') rounds.push(await measure(g, backend));
  }
  if (backends.includes('cpu')) rounds.push(await measure(g, 'cpu'));
  for (const backend of [...new Set(rounds.map((r) => r.backend))]) rows.push(best(rounds.filter((r) => r.backend === backend)));
}

const ratioTo = (row: Row, backend: Row['backend'], key: 'samplesPerSecond' | 'samplesPerCpuSecond' = 'samplesPerSecond') => {
  const base = rows.find((r) => r.genome === row.genome && r.backend === backend);
  return base ? row[key] / base[key] : null;
};
const fixed = (x: number | null, digits: number) => (x == null ? null : +x.toFixed(digits));
console.log(`load average ${loadavg().map((l) => l.toFixed(2)).join(' ')} on ${cpus().length} cores (others' load slows wall-clock figures; per-CPU-second figures less so)`);
console.log(`${pad('genome', 13)} ${pad('backend', 11)} ${pad('batch', 6)} ${pad('samples', 8)} ${pad('samples/s', 10)} ${pad('per CPU-s', 10)} ${pad('GFLOP/s', 8)} ${pad('MFLOP/sample', 13)} ${pad('× cpu', 7)} × native (per CPU-s)`);
for (const r of rows) {
  const x = ratioTo(r, 'cpu');
  const n = ratioTo(r, 'pytorch');
  const nCpu = ratioTo(r, 'pytorch', 'samplesPerCpuSecond');
  console.log(
    `${pad(r.genome, 13)} ${pad(r.backend, 11)} ${pad(String(r.batchSize), 6)} ${pad(String(r.samples), 8)} ${pad(r.samplesPerSecond.toFixed(1), 10)} ${pad(r.samplesPerCpuSecond.toFixed(1), 10)} ${pad(r.gflopsPerSecond.toFixed(2), 8)} ${pad(r.trainMflopsPerSample.toFixed(2), 13)} ${pad(x == null ? '' : x.toFixed(1), 7)} ${n == null ? '' : `${n.toFixed(3)} (${nCpu!.toFixed(3)})`}`,
  );
}
console.log(
  JSON.stringify({
    bench: 'train',
    node: process.version,
    quick,
    loadAverage: loadavg(),
    nativePeer: peer.python ? { framework: 'pytorch', version: peer.version, threads: peer.threads } : null,
    nativePeerNote: peer.note,
    results: rows.map((r) => ({
      ...r,
      samplesPerSecond: +r.samplesPerSecond.toFixed(2),
      samplesPerCpuSecond: +r.samplesPerCpuSecond.toFixed(2),
      gflopsPerSecond: +r.gflopsPerSecond.toFixed(3),
      ratioToCpu: fixed(ratioTo(r, 'cpu'), 2),
      ratioToNative: fixed(ratioTo(r, 'pytorch'), 3),
      ratioToNativePerCpuSecond: fixed(ratioTo(r, 'pytorch', 'samplesPerCpuSecond'), 3),
    })),
  }),
);
