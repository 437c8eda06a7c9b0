/**
 * How far two backends' results for the same job (genome, seed, budget, data) lie apart: the
 * measurement behind the verification tolerances (coordinator/src/trust/trust-rules.ts).
 *
 *   npx tsx worker/bench/backend-agreement.ts            # wasm twice, cpu once; a table and one JSON line
 *
 * Each backend trains in its own child process (a process keeps the backend it chose first). The
 * genomes are small dense and convolutional networks trained for a few epochs on synthetic 8×8
 * images in 4 classes, as in the search's quick evaluations.
 */
import { execFileSync } from 'node:child_process';
import { fileURLToPath } from 'node:url';
import type { BackendName, DataShape, Genome } from '@netbreeder/shared-types';

const DATA: DataShape = { inputShape: [8, 8, 1], numClasses: 4 };
const SEEDS = [3, 17, 29];

async function genomes(): Promise<Array<{ name: string; genome: Genome }>> {
  const { chainGenome, linearGenome } = await import('../src/training/reference-genomes.js');
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
}

/** Child mode: train every genome × seed on one backend and print the results as JSON. */
async function trainAll(backend: BackendName): Promise<void> {
  const { initBackend } = await import('../src/training/backend.js');
  const { syntheticSamples } = await import('../src/training/synthetic-samples.js');
  const { trainGenome } = await import('../src/training/train-genome.js');
  const choice = await initBackend({ prefer: [backend] });
  if (choice.backend !== backend) throw new Error(`wanted ${backend}, got ${choice.backend}`);
  const train = syntheticSamples(DATA, 512, 1);
  const val = syntheticSamples(DATA, 256, 2);
  const rows: Row[] = [];
  for (const { name, genome } of await genomes()) {
    for (const seed of SEEDS) {
      const r = await trainGenome({ genome, data: DATA, train, val, budget: { epochs: 4, maxSeconds: 600 }, seed });
      rows.push({ genome: name, seed, valAccuracy: r.valAccuracy!, valLoss: r.valLoss! });
    }
  }
  process.stdout.write(`${JSON.stringify(rows)}\n`);
}

function runChild(backend: BackendName): Row[] {
  const out = execFileSync(process.execPath, ['--import', 'tsx', fileURLToPath(import.meta.url), '--child', backend], { encoding: 'utf8', maxBuffer: 1 << 24 });
  return JSON.parse(out.trim().split('\n').at(-1)!) as Row[];
}

function compare(label: string, a: Row[], b: Row[]) {
  let maxAcc = 0;
  let maxRelLoss = 0;
  for (let i = 0; i < a.length; i++) {
    const acc = Math.abs(a[i]!.valAccuracy - b[i]!.valAccuracy);
    const rel = Math.abs(a[i]!.valLoss - b[i]!.valLoss) / Math.max(a[i]!.valLoss, b[i]!.valLoss, 1e-9);
    maxAcc = Math.max(maxAcc, acc);
    maxRelLoss = Math.max(maxRelLoss, rel);
    process.stdout.write(`${label.padEnd(12)} ${a[i]!.genome.padEnd(9)} seed ${String(a[i]!.seed).padEnd(3)} Δacc ${acc.toFixed(4)}  Δloss/loss ${rel.toExponential(2)}\n`);
  }
  return { pair: label, maxAccuracyDiff: maxAcc, maxRelativeLossDiff: maxRelLoss };
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
