/**
 * `npm run bench:resume`: how much CPU do checkpoints and resume save when PCs vanish mid-job?
 *
 * Real trainings of genomes of the fault suite's search space (6 to 12 epochs) on its demo tiles
 * with 300 tiles per class instead of 80 (so a training takes about a CPU second and the 10 ms
 * resolution of the CPU counters stays small beside it), each in a real training child process (the worker's `TrainingProcess`, wasm backend).
 * For every job it measures, as CPU seconds of the training child (user + system, /proc):
 *
 *   plain     the whole training without checkpoints;
 *   ckpt      the whole training with a checkpoint every epoch (the default), plus this process's
 *             CPU to hash and write each checkpoint (a stand-in for the worker's upload);
 *   lost      a drop at a drawn point u of the training (uniform in 5..95%, seeded): the child is
 *             SIGKILLed once its CPU reaches u · plain, once without and once with checkpoints;
 *   redo      after the plain drop, the whole training again from epoch 0;
 *   resume    after the checkpointed drop, the rest of the training from the last checkpoint.
 * Redo and resume both run in a fresh child, as on the next worker (its first training of a new
 * shape is slower on the wasm backend), so neither is favoured.
 *
 * Per dropped job, a run without resume pays lost(plain) + redo, a run with resume pays
 * lost(ckpt) + resume. At a drop rate p per job the expected CPU per job is
 *   without resume: plain + p · (lost(plain) + redo − plain)
 *   with resume:    ckpt  + p · (lost(ckpt) + resume − ckpt)
 * and the saving is their difference. The rates: the fault suite's (a worker killed mid-job every 5
 * to 9 recorded evaluations, about 1 in 7), and the 0.01 and 0.001 per job of REFERENCES.md
 * (from memory, not a published figure). The backend's start-up is not counted: in a real fleet
 * the next worker is already running, and each genome is trained once untimed first (the wasm
 * backend's first run of new shapes is slower); plain and ckpt are medians of three runs.
 * Prints a table and, last, one JSON object with every figure.
 *
 *   npm run bench:resume [-- --jobs N]     (default 8 jobs)
 */
import { createHash } from 'node:crypto';
import { readFileSync } from 'node:fs';
import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { cpus, tmpdir } from 'node:os';
import { join } from 'node:path';
import { parseArgs } from 'node:util';
import { createRandom, defaultSearchSpace, genomeHash, type Genome } from '@netbreeder/shared-types';
import { TrainingProcess, type ChildTrainRequest, type StartCheckpoint } from '@netbreeder/worker';
import { parseRunConfig } from '../src/config/run-config.js';
import { loadDataset } from '../src/importers/index.js';
import { storeDataset } from '../src/run/store-dataset.js';
import { createSearchAlgorithm } from '../src/search/index.js';

const { values: args } = parseArgs({ options: { jobs: { type: 'string', default: '8' } } });
const JOBS = Number(args.jobs);
const FAULT_SUITE_DROP_RATE = 1 / 7;

/** CPU seconds (user + system) a process has used, from /proc (Linux). */
const cpuOf = (pid: number): number => {
  const f = readFileSync(`/proc/${pid}/stat`, 'utf8').split(') ')[1]!.split(' ');
  return (Number(f[11]) + Number(f[12])) / 100;
};
const ownCpu = () => {
  const u = process.cpuUsage();
  return (u.user + u.system) / 1e6;
};

async function main(): Promise<void> {
  const dir = await mkdtemp(join(tmpdir(), 'nb-resume-bench-'));
  const config = parseRunConfig({
    name: 'resume bench',
    seed: 11,
    dataset: { kind: 'demo-tiles', samplesPerClass: 300, seed: 11 },
    searchSpace: { ...defaultSearchSpace(), epochs: { min: 6, max: 12 }, maxFlops: 1_000_000, filters: { min: 4, max: 12 }, units: { min: 8, max: 48 } },
  });
  const { dataset: prepared } = await loadDataset(config);
  const stored = await storeDataset(prepared, dir);
  const m = stored.manifest;
  const data = { inputShape: m.inputShape, numClasses: m.numClasses };
  const search = createSearchAlgorithm('random', { populationSize: 20, sampleSize: 5 }, { space: config.searchSpace!, data, seed: 11 });
  const rng = createRandom('resume bench drops');
  const trainer = new TrainingProcess();
  const backend = (await trainer.start()).backend;

  const request = (genome: Genome, seed: number, id: string, withCheckpoints: boolean, start?: StartCheckpoint): ChildTrainRequest => ({
    genome,
    data,
    shardPath: stored.shardPath,
    splits: 'train',
    budget: { epochs: genome.training.epochs, maxSeconds: 600 },
    seed,
    start,
    checkpoints: withCheckpoints ? { everyEpochs: 1, final: false, runId: 'bench', evaluationId: id } : undefined,
  });
  /** Trains to the end; CPU of the child, plus this process's CPU spent on the checkpoints it hands out. */
  const whole = async (req: ChildTrainRequest) => {
    await trainer.start();
    const pid = trainer.pid()!;
    const before = cpuOf(pid);
    let sideCpu = 0;
    let bytes = 0;
    const outcome = await trainer.train(req, {
      onCheckpoint: (b) => {
        const t = ownCpu();
        const sha = createHash('sha256').update(b).digest('hex');
        void writeFile(join(dir, `${sha}.nbck`), b); // what the coordinator does with an upload; the worker hashes it
        sideCpu += ownCpu() - t;
        bytes = b.length;
      },
    });
    return { cpu: cpuOf(pid) - before + sideCpu, outcome, bytes };
  };
  /** Trains until the child has used `cpuBudget` CPU seconds (polled every 5 ms), then SIGKILLs it: a PC switched off mid-job. */
  const dropped = async (req: ChildTrainRequest, cpuBudget: number) => {
    await trainer.start();
    const pid = trainer.pid()!;
    const before = cpuOf(pid);
    let last: { bytes: Uint8Array; epoch: number } | null = null;
    let spent = 0;
    const poll = setInterval(() => {
      const used = cpuOf(pid) - before;
      if (used < cpuBudget) return;
      clearInterval(poll);
      spent = used;
      trainer.kill();
    }, 5);
    await trainer.train(req, { onCheckpoint: (b, epoch) => void (last = { bytes: b, epoch }) }).catch(() => undefined);
    clearInterval(poll);
    if (spent === 0) spent = cpuOf(pid) - before; // it finished before the drop point (a noisy short run)
    return { cpu: spent, last: last as { bytes: Uint8Array; epoch: number } | null };
  };
  /** Median of three runs each, interleaved (plain, ckpt, plain, …) so a change in the machine's load hits both alike. */
  const medianPair = async (a: () => ChildTrainRequest, b: () => ChildTrainRequest) => {
    const ra: Awaited<ReturnType<typeof whole>>[] = [];
    const rb: typeof ra = [];
    for (let i = 0; i < 3; i++) {
      ra.push(await whole(a()));
      rb.push(await whole(b()));
    }
    const mid = (runs: typeof ra) => runs.sort((x, y) => x.cpu - y.cpu)[1]!;
    return [mid(ra), mid(rb)] as const;
  };

  interface Row { genome: string; epochs: number; dropAt: number; plain: number; ckpt: number; lostPlain: number; redo: number; lostCkpt: number; resumedFrom: number; resume: number; identical: boolean; checkpointBytes: number }
  const rows: Row[] = [];
  for (let j = 0; j < JOBS; j++) {
    const { genome } = search.propose();
    const seed = createRandom(`bench job ${j}`).uint32();
    const id = `bench-s${j}-a1`;
    const dropAt = rng.uniform(0.05, 0.95);
    await whole(request(genome, seed, id, false)); // warm-up, untimed
    const [plain, ckpt] = await medianPair(() => request(genome, seed, id, false), () => request(genome, seed, id, true));
    const lostPlain = await dropped(request(genome, seed, id, false), dropAt * plain.cpu);
    const redo = await whole(request(genome, seed, id, false));
    const lostCkpt = await dropped(request(genome, seed, id, true), dropAt * ckpt.cpu);
    const start: StartCheckpoint | undefined = lostCkpt.last ? { kind: 'resumed', bytes: lostCkpt.last.bytes, sha256: createHash('sha256').update(lostCkpt.last.bytes).digest('hex'), fromEvaluationId: id } : undefined;
    const resume = await whole(request(genome, seed, id, true, start));
    rows.push({
      genome: genomeHash(genome).slice(0, 10),
      epochs: genome.training.epochs,
      dropAt,
      plain: plain.cpu,
      ckpt: ckpt.cpu,
      lostPlain: lostPlain.cpu,
      redo: redo.cpu,
      lostCkpt: lostCkpt.cpu,
      resumedFrom: resume.outcome.start?.fromEpoch ?? 0,
      resume: resume.cpu,
      identical: resume.outcome.valLoss === plain.outcome.valLoss && resume.outcome.valAccuracy === plain.outcome.valAccuracy,
      checkpointBytes: ckpt.bytes,
    });
    const r = rows.at(-1)!;
    process.stderr.write(`job ${j + 1}/${JOBS}: ${r.epochs} epochs, drop at ${(dropAt * 100).toFixed(0)}%, resumed from epoch ${r.resumedFrom}\n`);
  }
  await trainer.close();
  await rm(dir, { recursive: true, force: true });

  const sum = (f: (r: Row) => number) => rows.reduce((a, r) => a + f(r), 0);
  const perJob = (f: (r: Row) => number) => sum(f) / rows.length;
  const plainMean = perJob((r) => r.plain);
  const ckptMean = perJob((r) => r.ckpt);
  const perDropWithout = perJob((r) => r.lostPlain + r.redo);
  const perDropWith = perJob((r) => r.lostCkpt + r.resume);
  const atRate = (p: number) => {
    const without = plainMean + p * perJob((r) => r.lostPlain + r.redo - r.plain);
    const withResume = ckptMean + p * perJob((r) => r.lostCkpt + r.resume - r.ckpt);
    // The same saving with the checkpoints' own cost left out: what resume alone buys (the overhead is small beside the noise here).
    const byResumeAlone = (p * (perDropWithout - perDropWith)) / without;
    return { dropRate: p, cpuPerJobWithout: without, cpuPerJobWith: withResume, savedPerJob: without - withResume, savedFraction: (without - withResume) / without, byResumeAlone };
  };
  const rates = [FAULT_SUITE_DROP_RATE, 0.01, 0.001].map(atRate);

  const f = (v: number, d = 2) => v.toFixed(d);
  console.log(`\nresume bench: ${rows.length} real trainings (fault suite's search space, 300 tiles per class) on ${backend}, ${cpus().length} cores (${cpus()[0]?.model ?? 'unknown CPU'}); CPU seconds of the training child\n`);
  console.log('| genome | epochs | drop at | plain | with checkpoints | lost, plain | redo | lost, ckpt | resumed from epoch | rest after resume | resumed = uninterrupted |');
  console.log('|---|---|---|---|---|---|---|---|---|---|---|');
  for (const r of rows) console.log(`| ${r.genome} | ${r.epochs} | ${(r.dropAt * 100).toFixed(0)}% | ${f(r.plain)} | ${f(r.ckpt)} | ${f(r.lostPlain)} | ${f(r.redo)} | ${f(r.lostCkpt)} | ${r.resumedFrom} | ${f(r.resume)} | ${r.identical ? 'yes' : 'NO'} |`);
  console.log(`\ncheckpoint overhead: ${f(((ckptMean - plainMean) / plainMean) * 100, 1)}% of a training (${f(ckptMean - plainMean, 3)} s per job, checkpoints of ${Math.round(perJob((r) => r.checkpointBytes) / 1024)} KiB)`);
  console.log(`per dropped job: ${f(perDropWithout)} s without resume, ${f(perDropWith)} s with (${f(((perDropWithout - perDropWith) / perDropWithout) * 100, 1)}% saved)`);
  console.log('\n| drop rate per job | CPU s per job without resume | with resume | saved per job | saved | saved by resume alone (overhead left out) |');
  console.log('|---|---|---|---|---|---|');
  for (const r of rates) console.log(`| ${r.dropRate === FAULT_SUITE_DROP_RATE ? '1/7 (fault suite)' : r.dropRate} | ${f(r.cpuPerJobWithout, 3)} | ${f(r.cpuPerJobWith, 3)} | ${f(r.savedPerJob, 3)} | ${f(r.savedFraction * 100, 1)}% | ${f(r.byResumeAlone * 100, 2)}% |`);
  console.log(JSON.stringify({ bench: 'resume', backend, cores: cpus().length, jobs: rows, plainMean, ckptMean, overheadFraction: (ckptMean - plainMean) / plainMean, perDropWithout, perDropWith, rates }));
}

main().catch((err: Error) => {
  console.error(err.stack ?? err.message);
  process.exit(1);
});
