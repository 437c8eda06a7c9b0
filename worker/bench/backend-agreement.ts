/**
 * How far two backends' results for the same job (genome, seed, budget, data) lie apart: the
 * measurement behind the verification tolerances (coordinator/src/trust/trust-rules.ts).
 *
 *   npx tsx --conditions=source worker/bench/backend-agreement.ts               # wasm twice, cpu once; a table and one JSON line
 *   npx tsx --conditions=source worker/bench/backend-agreement.ts --regression  # the same for regression: relative RMSE differences
 *
 * Each backend trains in its own child process (a process keeps the backend it chose first). The
 * genomes are small dense and convolutional networks trained for a few epochs on synthetic 8×8
 * images in 4 classes, as in the search's quick evaluations; with `--regression`, dense networks with
 * one linear head unit on a synthetic table of 4 features and a smooth numeric target (standardised
 * as the importer does), compared by their validation RMSE in the target's units.
 */
import { execFileSync } from 'node:child_process';
import { fileURLToPath } from 'node:url';
import type { BackendName, DataShape, Genome, LabelledSamples } from '@netbreeder/shared-types';
import { sourceNodeArgs } from '../src/node-entry.js';

const REGRESSION = process.argv.includes('--regression');
const DATA: DataShape = REGRESSION ? { inputShape: [4], numClasses: 2, target: { column: 'y', mean: 0, std: 1 } } : { inputShape: [8, 8, 1], numClasses: 4 };
const SEEDS = [3, 17, 29];

/** A seeded table of 4 features in [-1, 1) and y = 2·x0 − x1² + 0.5·x2·x3 + noise, standardised with the moments of the first call's table. */
async function regressionSamples(count: number, seed: number): Promise<LabelledSamples> {
  const { createRandom } = await import('@netbreeder/shared-types');
  const r = createRandom(`backend agreement regression ${seed}`);
  const features = new Float32Array(count * 4);
  const targets = new Float32Array(count);
  for (let i = 0; i < count; i++) {
    const x = [0, 1, 2, 3].map(() => r.next() * 2 - 1);
    features.set(x, i * 4);
    targets[i] = 2 * x[0]! - x[1]! ** 2 + 0.5 * x[2]! * x[3]! + (r.next() - 0.5) * 0.35;
  }
  return { features, labels: new Int32Array(count), count, targets };
}

async function genomes(): Promise<Array<{ name: string; genome: Genome }>> {
  const { chainGenome, linearGenome } = await import('../src/training/reference-genomes.js');
  if (REGRESSION) {
    const dense = (units: number[]) => chainGenome(units.map((u, i) => ({ id: `d${i}`, kind: 'dense' as const, units: u, activation: 'relu' as const })), { batchSize: 32, learningRate: 0.01 });
    return [
      { name: 'linear', genome: linearGenome({ batchSize: 32, learningRate: 0.01 }) },
      { name: 'dense-32', genome: dense([32]) },
      { name: 'dense-64-32', genome: dense([64, 32]) },
    ];
  }
  return [
    { name: 'linear', genome: linearGenome({ batchSize: 32, learningRate: 0.01 }) },
    { name: 'dense-32', genome: chainGenome([{ id: 'flat', kind: 'flatten' }, { id: 'd1', kind: 'dense', units: 32, activation: 'relu' }], { batchSize: 32, learningRate: 0.01 }) },
    {
      name: 'conv-4',
      genome: chainGenome(
        [
          { id: 'c1', kind: 'conv2d', filters: 4, kernelSize: 3, strides: 1, padding: 'same', activation: 'relu' },
          { id: 'p1', kind: 'max-pool2d', poolSize: 2, strides: 2 },
          { id: 'drop', kind: 'dropout', rate: 0.2 },
        ],
        { batchSize: 32, learningRate: 0.01 },
      ),
    },
  ];
}

interface Row {
  genome: string;
  seed: number;
  valAccuracy: number;
  valLoss: number;
  /** Regression only: validation RMSE in the target's units. */
  valRmse?: number;
}

/** Child mode: train every genome × seed on one backend and print the results as JSON. */
async function trainAll(backend: BackendName): Promise<void> {
  const { initBackend } = await import('../src/training/backend.js');
  const { syntheticSamples } = await import('../src/training/synthetic-samples.js');
  const { trainGenome } = await import('../src/training/train-genome.js');
  const choice = await initBackend({ prefer: [backend] });
  if (choice.backend !== backend) throw new Error(`wanted ${backend}, got ${choice.backend}`);
  const train = REGRESSION ? await regressionSamples(512, 1) : syntheticSamples(DATA, 512, 1);
  const val = REGRESSION ? await regressionSamples(256, 2) : syntheticSamples(DATA, 256, 2);
  const rows: Row[] = [];
  for (const { name, genome } of await genomes()) {
    for (const seed of SEEDS) {
      const r = await trainGenome({ genome, data: DATA, train, val, budget: { epochs: 4, maxSeconds: 600 }, seed });
      rows.push({ genome: name, seed, valAccuracy: r.valAccuracy!, valLoss: r.valLoss!, ...(r.valRegression ? { valRmse: r.valRegression.rmse } : {}) });
    }
  }
  process.stdout.write(`${JSON.stringify(rows)}\n`);
}

function runChild(backend: BackendName): Row[] {
  const out = execFileSync(process.execPath, [...sourceNodeArgs(), fileURLToPath(import.meta.url), '--child', backend, ...(REGRESSION ? ['--regression'] : [])], { encoding: 'utf8', maxBuffer: 1 << 24 });
  return JSON.parse(out.trim().split('\n').at(-1)!) as Row[];
}

function compare(label: string, a: Row[], b: Row[]) {
  let maxAcc = 0;
  let maxRelLoss = 0;
  let maxRelRmse = 0;
  for (let i = 0; i < a.length; i++) {
    const acc = Math.abs(a[i]!.valAccuracy - b[i]!.valAccuracy);
    const rel = Math.abs(a[i]!.valLoss - b[i]!.valLoss) / Math.max(a[i]!.valLoss, b[i]!.valLoss, 1e-9);
    maxAcc = Math.max(maxAcc, acc);
    maxRelLoss = Math.max(maxRelLoss, rel);
    const relRmse = a[i]!.valRmse === undefined ? 0 : Math.abs(a[i]!.valRmse! - b[i]!.valRmse!) / Math.max(a[i]!.valRmse!, b[i]!.valRmse!, 1e-9);
    maxRelRmse = Math.max(maxRelRmse, relRmse);
    const rmseText = REGRESSION ? `  ΔRMSE/RMSE ${relRmse.toExponential(2)}` : '';
    process.stdout.write(`${label.padEnd(12)} ${a[i]!.genome.padEnd(11)} seed ${String(a[i]!.seed).padEnd(3)} Δacc ${acc.toFixed(4)}  Δloss/loss ${rel.toExponential(2)}${rmseText}\n`);
  }
  return { pair: label, maxAccuracyDiff: maxAcc, maxRelativeLossDiff: maxRelLoss, ...(REGRESSION ? { maxRelativeRmseDiff: maxRelRmse } : {}) };
}

const childAt = process.argv.indexOf('--child');
if (childAt >= 0) {
  await trainAll(process.argv[childAt + 1] as BackendName);
} else {
  const wasmA = runChild('wasm');
  const wasmB = runChild('wasm');
  const cpu = runChild('cpu');
  const summary = [compare('wasm-wasm', wasmA, wasmB), compare('wasm-cpu', wasmA, cpu)];
  process.stdout.write(`${JSON.stringify({ backendAgreement: summary })}\n`);
}
