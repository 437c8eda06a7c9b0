import { Type, type Static } from '@sinclair/typebox';
import { BackendNameSchema } from './evaluation-result.js';

/** A worker's lifecycle: starting → idle ⇄ training → draining → stopped. */
export const WorkerStateSchema = Type.Union([Type.Literal('starting'), Type.Literal('idle'), Type.Literal('training'), Type.Literal('draining'), Type.Literal('stopped')]);
export type WorkerState = Static<typeof WorkerStateSchema>;

/**
 * The version of what a worker and a coordinator say to each other (jobs, results, heartbeats,
 * checkpoints): one more whenever one of those messages gains or changes something the other side
 * must understand. A worker sends it in every heartbeat; the coordinator refuses a worker whose
 * version differs from its own at its first heartbeat, with a sentence saying which version to
 * install, instead of letting it fail job after job on a schema it does not know.
 * 1: workers that sent none; 2: jobs may carry schedules, augmentation, label smoothing, patience
 * and repeated motifs; 3: a champion job may hold validation samples back for the final choice
 * (`selectionHoldout`).
 */
export const WORKER_PROTOCOL_VERSION = 3;

/** Sent by every worker to the coordinator every few seconds (POST /workers/heartbeat). */
export const WorkerHeartbeatSchema = Type.Object(
  {
    schemaVersion: Type.Literal(1),
    workerId: Type.String({ pattern: '^[A-Za-z0-9_.:-]{1,128}$' }),
    host: Type.String({ minLength: 1, maxLength: 255 }),
    pid: Type.Integer({ minimum: 1 }),
    cores: Type.Integer({ minimum: 1, maximum: 4096 }),
    backend: Type.Union([BackendNameSchema, Type.Null()]),
    /** Why this backend: which ones were tried and why they were passed over. */
    backendReason: Type.String({ maxLength: 2000 }),
    state: WorkerStateSchema,
    currentEvaluationId: Type.Union([Type.String({ maxLength: 80 }), Type.Null()]),
    evaluationsDone: Type.Integer({ minimum: 0 }),
    evaluationsFailed: Type.Integer({ minimum: 0 }),
    /** Training speed of the last evaluation, samples per second. */
    samplesPerSecond: Type.Number({ minimum: 0 }),
    rssBytes: Type.Integer({ minimum: 0 }),
    memoryCapMb: Type.Integer({ minimum: 1 }),
    version: Type.String({ maxLength: 40 }),
    /** {@link WORKER_PROTOCOL_VERSION} of the worker; absent: 1 (a worker from before it was sent). */
    protocol: Type.Optional(Type.Integer({ minimum: 1, maximum: 1000 })),
    /** Watts one busy core of this PC draws (the worker's `--watts`), for the energy estimate. */
    watts: Type.Optional(Type.Number({ exclusiveMinimum: 0, maximum: 10_000 })),
    /** True when `watts` is the default assumption, not a figure the PC's owner set. */
    wattsAssumed: Type.Optional(Type.Boolean()),
  },
  { additionalProperties: false },
);
export type WorkerHeartbeat = Static<typeof WorkerHeartbeatSchema>;

/**
 * The coordinator's answer to a heartbeat when it has something to say (HTTP 200; otherwise 204,
 * no body): the worker is quarantined, so it should take no more jobs (its results are refused).
 */
export const HeartbeatReplySchema = Type.Object({
  quarantined: Type.Boolean(),
  reason: Type.String({ maxLength: 2000 }),
});
export type HeartbeatReply = Static<typeof HeartbeatReplySchema>;

/**
 * Watts one busy core is assumed to draw when a worker's owner gives no `--watts`. An assumption
 * (rule of thumb, not a measurement): a desktop CPU of 65 W rated power with 4 to 8 cores, plus a
 * share of the rest of the PC, is about 15 W per fully busy core above idle.
 */
export const DEFAULT_WORKER_WATTS = 15;
