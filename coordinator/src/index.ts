/** @netbreeder/coordinator: search, store, queue, run management, HTTP API. */
export { Coordinator, COORDINATOR_VERSION, DEFAULT_PORT, resolveCoordinatorOptions, type CoordinatorOptions } from './coordinator.js';
export { RunStore, type RunRecord, type EvaluationRecord, type ChampionRecord, type StoredDataset } from './store/run-store.js';
export { TrustStore, type VerificationRecord, type VerdictRecord, type WorkerTrustRecord, type CpuUsageRow } from './store/trust-store.js';
export { Verifier, verificationSettings } from './trust/verifier.js';
export { EvaluationQueue, type FinishedJob } from './queue/evaluation-queue.js';
export { RunManager, evaluationSeed, type RunControl, type RunManagerOptions, type RunManagerEvents } from './run/run-manager.js';
export { buildStatus } from './run/status-report.js';
export { parseRunConfig, readRunConfigFile } from './config/run-config.js';
export { loadDataset, resolveSourcePaths, type LoadedDataset, type LoadDatasetOptions } from './importers/index.js';
export { DatasetError, describePreprocessing, type DatasetErrorCode, type DatasetPreparation, type DatasetPreprocessing, type DatasetWarning } from './datasets/index.js';
export { championFiles, championSummary, CHAMPION_FILES } from './champion/champion-files.js';
export { exportChampion } from './champion/export-champion.js';
export { createHttpServer } from './http/server.js';
export { createLogger } from './logger.js';
export { spawnWorker, tsxNodeArgs, workerCliPath } from './cli/spawn-worker.js';
export { downloadChampion } from './cli/export-command.js';
export { COORDINATOR_OPTIONS, COMMANDS, main } from './cli/commands.js';
