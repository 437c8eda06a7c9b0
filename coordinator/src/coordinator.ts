import { mkdir } from 'node:fs/promises';
import { join, resolve } from 'node:path';
import type { FastifyInstance } from 'fastify';
import { DEFAULT_QUEUE_LOCATION, type QueueLocation } from '@netbreeder/worker';
import type { RunConfig } from '@netbreeder/shared-types';
import type { PreparedRun } from './run/prepare-run.js';
import { createLogger, type Logger } from './logger.js';
import { RunStore } from './store/run-store.js';
import { EvaluationQueue } from './queue/evaluation-queue.js';
import { RunManager, type RunManagerEvents } from './run/run-manager.js';
import { createHttpServer } from './http/server.js';
import { StallChecker } from './queue/stall-checker.js';
import { loadSecrets, type CoordinatorSecrets } from './config/secrets.js';
import { RunStateError } from './run/run-manager-options.js';

import { COORDINATOR_VERSION } from './version.js';

export { COORDINATOR_VERSION };

/**
 * Default HTTP port: 7460, clear of the services usually found on an office server
 * (Redis 6379, PostgreSQL 5432, MySQL 3306, AMQP 5672, MQTT 1883, NATS 4222, HTTP 80/8080).
 */
export const DEFAULT_PORT = 7460;

export interface CoordinatorOptions {
  /** Folder for the store (`store.sqlite`), datasets and exports. @default './netbreeder-data' */
  dataDir: string;
  /** HTTP port; 0 picks a free one. @default 7460 */
  port: number;
  /** Address to listen on. @default '0.0.0.0' (reachable by workers on the office network) */
  host: string;
  queue: QueueLocation;
  /** Milliseconds between reconcile passes. @default 1000 */
  tickMs: number;
  /** How long a finished job waits for others to share its reconcile pass (`RunManagerOptions.passDelayMs`; 0: a pass at once). @default 50 */
  passDelayMs: number;
  logger: Logger;
  /** Token workers present to join (heartbeats, datasets). @default kept in dataDir/secrets.json, random on first start */
  joinToken?: string;
  /** Token for run control, revocation and export. @default kept in dataDir/secrets.json, random on first start */
  adminToken?: string;
  /** Whether status views (GET /status, the dashboard) need no token. @default true */
  publicStatus: boolean;
  /** Lock length the workers use; the coordinator's stall check must agree. @default 30000 */
  lockDurationMs: number;
  /** How often the coordinator looks for jobs of vanished workers. @default 15000 */
  stalledIntervalMs: number;
}

export function resolveCoordinatorOptions(given: Partial<CoordinatorOptions>): CoordinatorOptions {
  const defined = Object.fromEntries(Object.entries(given).filter(([, v]) => v !== undefined)) as Partial<CoordinatorOptions>;
  return {
    dataDir: './netbreeder-data',
    port: DEFAULT_PORT,
    host: '0.0.0.0',
    queue: DEFAULT_QUEUE_LOCATION,
    tickMs: 1000,
    passDelayMs: 50,
    logger: createLogger('coordinator'),
    publicStatus: true,
    lockDurationMs: 30_000,
    stalledIntervalMs: 15_000,
    ...defined,
  };
}

/** The coordinator process's parts, wired together: store, queue, run manager, HTTP API. */
export class Coordinator {
  private constructor(
    readonly options: CoordinatorOptions,
    readonly store: RunStore,
    readonly queue: EvaluationQueue,
    readonly manager: RunManager,
    readonly http: FastifyInstance,
    readonly url: string,
    readonly secrets: CoordinatorSecrets & { path: string },
    private readonly stallChecker: StallChecker,
  ) {}

  /** Opens the store, connects to the queue, resumes an unfinished run if there is one, and listens. */
  static async start(given: Partial<CoordinatorOptions>, events: RunManagerEvents = {}): Promise<Coordinator> {
    const options = resolveCoordinatorOptions(given);
    const dataDir = resolve(options.dataDir);
    await mkdir(dataDir, { recursive: true });
    const log = options.logger;
    const store = new RunStore(join(dataDir, 'store.sqlite'), {
      // Soft state: each worker sends its next heartbeat within seconds.
      onHeartbeatWriteError: (err, heartbeats) => log.error({ err: err.message, heartbeats }, "cannot store heartbeats; the workers' next ones will be tried"),
      backgroundCheckpoints: {
        onFailure: (err) => log.warn({ err: err.message }, 'the store checkpoints on the main thread again (slower under load)'),
      },
    });
    const queue = new EvaluationQueue(options.queue, log.child({ part: 'queue' }));
    const manager = new RunManager({ store, queue, log: log.child({ part: 'run' }), dataDir, tickMs: options.tickMs, passDelayMs: options.passDelayMs }, events);
    const startedAt = Date.now();
    const secrets = await loadSecrets(dataDir, { joinToken: options.joinToken, adminToken: options.adminToken });
    const http = await createHttpServer({
      manager,
      queue,
      logger: log.child({ part: 'http' }),
      version: COORDINATOR_VERSION,
      startedAt,
      tokens: { joinToken: secrets.joinToken, adminToken: secrets.adminToken, publicStatus: options.publicStatus },
    });
    const address = await http.listen({ port: options.port, host: options.host });
    const url = address.replace('0.0.0.0', '127.0.0.1').replace('[::]', '127.0.0.1');
    log.info({ url, dataDir, prefix: options.queue.prefix, queue: options.queue.queueName }, 'coordinator listening');
    await manager.resume();
    await manager.startLoop();
    const stallChecker = new StallChecker(options.queue, { lockDurationMs: options.lockDurationMs, stalledIntervalMs: options.stalledIntervalMs }, log.child({ part: 'stall-check' }));
    stallChecker.start();
    return new Coordinator(options, store, queue, manager, http, url, secrets, stallChecker);
  }

  /** Starts a new run (the previous one must have ended), from a run file or its {@link prepareRun} result. */
  async startRun(config: RunConfig | PreparedRun) {
    const active = this.store.unfinishedRun();
    if (active) throw new RunStateError(`run ${active.id} is still ${active.state}; one run at a time per coordinator`);
    const run = await this.manager.startRun(config);
    await this.manager.tick();
    return run;
  }

  async close(): Promise<void> {
    await this.stallChecker.close();
    await this.manager.stopLoop();
    await this.http.close();
    await this.queue.close();
    this.store.close();
  }
}
