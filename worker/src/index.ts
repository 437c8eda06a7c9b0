/** @netbreeder/worker: the training engine and the agent that pulls jobs and trains them. */
export * from './training/index.js';
export { WorkerAgent, WORKER_VERSION } from './agent/worker-agent.js';
export { HeartbeatSender } from './agent/heartbeat-sender.js';
export { resolveWorkerOptions, defaultCacheDir, type WorkerOptions } from './agent/worker-options.js';
export { DatasetCache, type DatasetCacheOptions } from './agent/dataset-cache.js';
export { openRedis, DEFAULT_QUEUE_LOCATION, type QueueLocation } from './agent/redis-connection.js';
export { createLogger as createProcessLogger, logFormat, takeLogFormatOption, type LogFormat } from './log/create-logger.js';
export { msUntilClockTime } from './agent/stop-time.js';
export { sourceNodeArgs, workerCliEntry } from './node-entry.js';
export { runWorkerCli, parseWorkerArgs, parseSimulationArgs, WORKER_HELP } from './worker-cli.js';
export type { Trainer } from './agent/trainer.js';
export type { WorkerAgentParts } from './agent/worker-agent.js';
export { SimulatedTraining, parseSimulateSpec, drawLogNormalSeconds, syntheticAccuracy, type SimulationSettings, type SimulatedTrainingOptions } from './agent/simulated-training.js';
export { SimulatedFleet, type SimulatedFleetOptions, type FleetStats } from './agent/simulated-fleet.js';
