/** The training engine's public face: backends, genome → model, training, scoring, model transfer. */
export { initBackend, currentBackend, type InitBackendOptions, type BackendChoice } from './backend.js';
export { registerWasmTrainingKernels, unregisterWasmTrainingKernels, WASM_TRAINING_KERNELS, type WasmKernelRegistration } from './kernels/register-wasm-kernels.js';
export { buildModel, HEAD_DENSE_NAME, HEAD_FLATTEN_NAME } from './build-model.js';
export { SeededDropout, type SeededDropoutArgs } from './seeded-dropout.js';
export { ChannelBatchNorm, type ChannelBatchNormArgs } from './channel-batch-norm.js';
export { trainGenome, DIVERGED_LOSS, type TrainRequest, type TrainOutcome } from './train-genome.js';
export { evaluateModel, crossEntropy, type ModelEvaluation } from './evaluate-model.js';
export { evaluateRegression, meanSquaredError, type RegressionEvaluation } from './evaluate-regression.js';
export { singleSampleLatencyMs } from './measure-latency.js';
export { modelToMessage, artifactsFromMessage, loadModelFromMessage } from './model-artifacts.js';
export { estimateTrainingBytes, type TrainingMemoryEstimate } from './memory-estimate.js';
export { shuffleInPlace, identityOrder } from './batches.js';
export { TrainingError, InvalidGenomeError, GenomeTooLargeError, TrainingProcessError, TrainingAbortedError, isRetryable } from './errors.js';
export { TrainingProcess, type TrainingProcessOptions, type TrainCallOptions } from './training-process.js';
export type { ChildTrainRequest } from './training-protocol.js';
export { planWeightCopy, type WeightSpec, type WeightCopyPlan } from './weight-inheritance.js';
export type { StartCheckpoint } from './training-checkpoint.js';
