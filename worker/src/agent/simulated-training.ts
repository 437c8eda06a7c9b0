import { NetbreederError, analyzeGenome, createRandom, genomeHash, type Random } from '@netbreeder/shared-types';
import type { BackendChoice } from '../training/backend.js';
import type { TrainCallOptions } from '../training/training-process.js';
import type { ChildTrainRequest } from '../training/training-protocol.js';
import type { TrainOutcome } from '../training/train-genome.js';
import type { Trainer } from './trainer.js';
import { TrainingAbortedError } from '../training/errors.js';

/**
 * Settings of simulated training. FOR TESTS AND THE SCALE BENCHMARK ONLY: nothing is trained, the
 * results are synthetic.
 */
export interface SimulationSettings {
  /** Mean simulated training time in seconds (0: results come back at once). */
  meanSeconds: number;
  /** Spread of the log-normal: the standard deviation of the log of the time. 0 = every job takes the mean. */
  sigma: number;
  /** Probability (0..1) that a job is abandoned: the simulated PC vanishes without reporting. @default 0 */
  dropRate: number;
  /** Seed of the drawn times and drops (each agent adds its own id). @default 'simulate' */
  seed: string;
}

/** Parses `lognormal:MEAN_S:SIGMA` (the `--simulate` flag). */
export function parseSimulateSpec(spec: string): Pick<SimulationSettings, 'meanSeconds' | 'sigma'> {
  const m = /^lognormal:([0-9]*\.?[0-9]+):([0-9]*\.?[0-9]+)$/.exec(spec);
  if (!m) throw new NetbreederError('NB_BAD_USAGE', `--simulate must look like lognormal:MEAN_SECONDS:SIGMA (for example lognormal:10:0.5), got '${spec}'`);
  const meanSeconds = Number(m[1]);
  const sigma = Number(m[2]);
  if (meanSeconds > 86_400 || sigma > 5) throw new NetbreederError('NB_BAD_USAGE', `--simulate: mean at most 86400 s and sigma at most 5, got '${spec}'`);
  return { meanSeconds, sigma };
}

/**
 * A log-normal draw with the given mean (not median): the log of the time is normal with standard
 * deviation `sigma` and mean ln(mean) − sigma²/2, so the times average `meanSeconds`.
 */
export function drawLogNormalSeconds(random: Random, meanSeconds: number, sigma: number): number {
  if (meanSeconds <= 0) return 0;
  const mu = Math.log(meanSeconds) - (sigma * sigma) / 2;
  return Math.exp(mu + sigma * random.normal());
}

/**
 * The synthetic validation accuracy of a genome: a deterministic function of its size (larger
 * networks score higher, with diminishing returns, so mutations that grow a network are rewarded
 * and the search has signal to follow) plus a fixed offset drawn from its hash (so equal genomes
 * always score the same and different ones rarely tie). Always in [0.05, 0.99].
 */
export function syntheticAccuracy(genomeHashHex: string, params: number): number {
  const sizeTerm = 0.25 + 0.6 * (1 - Math.exp(-params / 50_000));
  const hashTerm = (createRandom(genomeHashHex).next() - 0.5) * 0.1;
  return Math.min(0.99, Math.max(0.05, sizeTerm + hashTerm));
}

let rss = { bytes: 0, at: -Infinity };
/** The process's RSS, read at most once a second (hundreds of simulated jobs a second share one process). */
function sampledRss(): number {
  const now = Date.now();
  if (now - rss.at >= 1000) rss = { bytes: process.memoryUsage.rss(), at: now };
  return rss.bytes;
}

/** One simulated job start: how long this agent waited for it since it was last free. */
export type WaitSample = (waitMs: number) => void;

/** Options of {@link SimulatedTraining}. */
export interface SimulatedTrainingOptions extends SimulationSettings {
  /** Called when a job is to be abandoned; the owner then stops the agent at once (as a PC switched off). */
  onDrop?: () => void;
  /** Called at each job start with the time since this trainer was last free (started, or finished a job). */
  onWait?: WaitSample;
}

/**
 * A {@link Trainer} that trains nothing. FOR TESTS AND THE SCALE BENCHMARK ONLY. Each job waits a
 * seeded log-normal time (capped at the job's `maxSeconds`) and returns a schema-valid result with
 * backend `cpu`, the genome's real parameter count and FLOPs and a {@link syntheticAccuracy}.
 * With probability `dropRate` a job is abandoned instead: it never settles and `onDrop` is called,
 * so the agent stops without reporting and the job's lock lapses. A champion job gets an untrained
 * model built from the genome (so the coordinator can score and export it).
 */
export class SimulatedTraining implements Trainer {
  private readonly random: Random;
  private freeSince = Date.now();
  private timer: NodeJS.Timeout | null = null;
  private rejectCurrent: ((err: Error) => void) | null = null;

  constructor(private readonly opts: SimulatedTrainingOptions) {
    this.random = createRandom(opts.seed);
  }

  async start(): Promise<BackendChoice> {
    this.freeSince = Date.now();
    return { backend: 'cpu', reason: 'simulated training (test and benchmark mode): nothing is trained' };
  }

  async train(request: ChildTrainRequest, _call: TrainCallOptions = {}): Promise<TrainOutcome> {
    this.opts.onWait?.(Date.now() - this.freeSince);
    const analysis = analyzeGenome(request.genome, request.data);
    if (!analysis.ok) throw new NetbreederError('NB_INVALID_GENOME', `simulated training: invalid genome: ${analysis.issues.map((i) => i.message).join('; ')}`);
    if (this.random.chance(this.opts.dropRate)) {
      this.opts.onDrop?.();
      return new Promise<TrainOutcome>(() => {}); // a vanished PC never answers
    }
    const drawn = drawLogNormalSeconds(this.random, this.opts.meanSeconds, this.opts.sigma);
    const seconds = Math.min(drawn, request.budget.maxSeconds);
    await new Promise<void>((resolve, reject) => {
      this.rejectCurrent = reject;
      if (seconds <= 0) setImmediate(resolve);
      else this.timer = setTimeout(resolve, seconds * 1000);
    }).finally(() => {
      this.timer = null;
      this.rejectCurrent = null;
    });
    const { params, flops } = analysis.analysis;
    const valAccuracy = syntheticAccuracy(genomeHash(request.genome), params);
    const outcome: TrainOutcome = {
      backend: 'cpu',
      valAccuracy: request.splits === 'train' ? valAccuracy : null,
      valLoss: request.splits === 'train' ? -Math.log(valAccuracy) : null,
      trainLoss: -Math.log(Math.min(0.99, valAccuracy + 0.02)),
      trainAccuracy: Math.min(0.99, valAccuracy + 0.02),
      paramCount: params,
      flops,
      epochsRun: request.budget.epochs,
      samplesSeen: 0,
      trainSeconds: seconds,
      samplesPerSecond: 0,
      peakRssBytes: sampledRss(),
      stoppedBy: drawn > request.budget.maxSeconds ? 'seconds' : 'epochs',
      history: [],
    };
    if (request.exportModel) outcome.model = await untrainedModel(request);
    this.freeSince = Date.now();
    return outcome;
  }

  kill(): void {
    if (this.timer) clearTimeout(this.timer);
    this.rejectCurrent?.(new TrainingAbortedError('simulated training abandoned by a forced stop'));
  }

  async close(): Promise<void> {
    this.kill();
  }
}

/**
 * Builds the genome's model with its initial (untrained) weights, on whatever backend this process
 * already uses (the same choice as everywhere: a process shares one TensorFlow.js engine, so a
 * coordinator in the same process keeps its own backend).
 */
async function untrainedModel(request: ChildTrainRequest): Promise<NonNullable<TrainOutcome['model']>> {
  const { initBackend } = await import('../training/backend.js');
  const { buildModel } = await import('../training/build-model.js');
  const { modelToMessage } = await import('../training/model-artifacts.js');
  await initBackend();
  const model = buildModel(request.genome, request.data, request.seed);
  try {
    return await modelToMessage(model);
  } finally {
    model.dispose();
  }
}
