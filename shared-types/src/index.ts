/** @netbreeder/shared-types: the schema and static type of every message and file, and the pure
 * genome rules that coordinator and worker share. No I/O. */
export * from './validation.js';
export * from './random.js';
export * from './sha256.js';
export * from './genome/genome-schema.js';
export * from './genome/search-space-schema.js';
export * from './genome/analyze.js';
export * from './genome/motifs.js';
export * from './genome/canonical.js';
export * from './genome/validate.js';
export * from './genome/reference-networks.js';
export * from './messages/dataset-manifest.js';
export * from './messages/evaluation-job.js';
export * from './messages/evaluation-result.js';
export * from './messages/worker-heartbeat.js';
export * from './messages/run-config.js';
export * from './messages/status-response.js';
export * from './messages/trust-status.js';
export * from './messages/validators.js';
export * from './dataset/labelled-samples.js';
export * from './dataset/shard-codec.js';
export * from './messages/dashboard-responses.js';
export * from './checkpoint/checkpoint-header.js';
export * from './checkpoint/checkpoint-ref.js';
export * from './checkpoint/checkpoint-codec.js';
export * from './messages/search-decision.js';
export * from './messages/champion-choice.js';
