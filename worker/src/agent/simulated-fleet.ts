import type { Logger } from 'pino';
import { DatasetCache } from './dataset-cache.js';
import { SimulatedTraining, type SimulationSettings } from './simulated-training.js';
import { WorkerAgent } from './worker-agent.js';
import type { WorkerOptions } from './worker-options.js';

/** Options of {@link SimulatedFleet}. FOR TESTS AND THE SCALE BENCHMARK ONLY. */
export interface SimulatedFleetOptions {
  /** Options every agent shares; each agent's id is `${workerId}-s${index}` (a replacement adds `r${n}`). */
  worker: WorkerOptions;
  simulation: SimulationSettings;
  /** How many simulated workers this process runs. */
  count: number;
  /**
   * Start a fresh agent (a new id) in place of each one that dropped a job, so the fleet keeps its
   * size, as an office where a PC that was switched off is replaced by another. @default true
   */
  replaceDropped?: boolean;
}

/** What the fleet has done so far. */
export interface FleetStats {
  agents: number;
  started: number;
  dropped: number;
  /** Each job start's wait since the agent was last free, in milliseconds. */
  waitsMs: number[];
}

/**
 * Many simulated workers in one process: each is a real {@link WorkerAgent} (its own BullMQ worker,
 * Redis connection, worker id and heartbeats) whose training is a {@link SimulatedTraining}.
 * They share one dataset cache, so the shard is fetched from the coordinator once per process.
 */
export class SimulatedFleet {
  private readonly agents = new Set<WorkerAgent>();
  private readonly cache: DatasetCache;
  private readonly stats: FleetStats = { agents: 0, started: 0, dropped: 0, waitsMs: [] };
  private replacements = 0;
  private stopping = false;

  constructor(
    private readonly opts: SimulatedFleetOptions,
    private readonly log: Logger,
  ) {
    const w = opts.worker;
    this.cache = new DatasetCache({ dir: w.cacheDir, maxBytes: w.cacheMaxMb * 1024 * 1024, coordinatorUrl: w.coordinatorUrl, joinToken: w.joinToken }, log);
  }

  /** Starts every agent (a few at a time, so a thousand do not open their connections at once). */
  async start(): Promise<void> {
    const ids = Array.from({ length: this.opts.count }, (_, i) => `${this.opts.worker.workerId}-s${i}`);
    for (let i = 0; i < ids.length; i += 50) await Promise.all(ids.slice(i, i + 50).map((id) => this.startAgent(id)));
    this.log.warn({ agents: this.opts.count, simulation: this.opts.simulation }, 'SIMULATED workers started: nothing is trained, results are synthetic (test and benchmark mode only)');
  }

  private async startAgent(workerId: string): Promise<void> {
    let agent: WorkerAgent | null = null;
    const trainer = new SimulatedTraining({
      ...this.opts.simulation,
      seed: `${this.opts.simulation.seed}:${workerId}`,
      onWait: (ms) => {
        this.stats.started++;
        this.stats.waitsMs.push(ms);
      },
      onDrop: () => {
        this.stats.dropped++;
        const dropped = agent!;
        // After the processor has returned its never-settling promise: stop renewing the lock and leave.
        setImmediate(() => void this.drop(dropped, workerId));
      },
    });
    agent = new WorkerAgent({ ...this.opts.worker, workerId }, this.log.child({ workerId }), { trainer, cache: this.cache });
    this.agents.add(agent);
    this.stats.agents++;
    await agent.start();
  }

  private async drop(agent: WorkerAgent, workerId: string): Promise<void> {
    this.log.info({ workerId }, 'simulated PC vanished mid-job');
    await agent.stop({ force: true });
    this.agents.delete(agent);
    if (this.stopping || this.opts.replaceDropped === false) return;
    await this.startAgent(`${workerId.replace(/r\d+$/, '')}r${++this.replacements}`);
  }

  /** Counters and the waits so far (the waits array is shared, not copied). */
  snapshot(): FleetStats {
    return { ...this.stats, agents: this.agents.size };
  }

  /** Stops every agent; with `force` their jobs are abandoned. */
  async stop(opts: { force?: boolean } = {}): Promise<void> {
    this.stopping = true;
    await Promise.all([...this.agents].map((a) => a.stop(opts)));
    this.agents.clear();
  }
}
