import { Type, type Static } from '@sinclair/typebox';

/** CPU time and estimated energy of a set of evaluations (a run, a kind of job, one worker). */
export const CpuFiguresSchema = Type.Object({
  /** Results counted (search, champion and verification trainings). */
  evaluations: Type.Integer({ minimum: 0 }),
  /** CPU time of the training processes (user + system), not wall time. */
  cpuSeconds: Type.Number({ minimum: 0 }),
  cpuSecondsPerEvaluation: Type.Number({ minimum: 0 }),
  /** CPU-seconds × the worker's watts per busy core / 3600. An estimate. */
  wattHours: Type.Number({ minimum: 0 }),
  /** The part of `wattHours` computed from the default watts (an assumption, no owner gave `--watts`). */
  assumedWattHours: Type.Number({ minimum: 0 }),
});
export type CpuFigures = Static<typeof CpuFiguresSchema>;

/** A run's CPU accounting for GET /status, the dashboard and the champion report. */
export const AccountingStatusSchema = Type.Object({
  total: CpuFiguresSchema,
  search: CpuFiguresSchema,
  champion: CpuFiguresSchema,
  verification: CpuFiguresSchema,
  /** Watts per busy core used for workers that did not set `--watts`. */
  defaultWatts: Type.Number(),
  /** One sentence on how energy is estimated and what is assumed. */
  energyNote: Type.String(),
});
export type AccountingStatus = Static<typeof AccountingStatusSchema>;

/** A worker's verification record on GET /status. */
export const WorkerTrustStatusSchema = Type.Object({
  /** (agreed + 1) / (agreed + failed + 1): 1 for a worker nobody has checked. */
  reliability: Type.Number({ minimum: 0, maximum: 1 }),
  agreed: Type.Integer({ minimum: 0 }),
  failed: Type.Integer({ minimum: 0 }),
  quarantined: Type.Boolean(),
  quarantineReason: Type.Union([Type.String(), Type.Null()]),
});
export type WorkerTrustStatus = Static<typeof WorkerTrustStatusSchema>;

/** Replicated verification of the run on GET /status. */
export const VerificationStatusSchema = Type.Object({
  spotCheckFraction: Type.Number(),
  timeoutSeconds: Type.Number(),
  /** Verifications queued or training now. */
  open: Type.Integer({ minimum: 0 }),
  confirmed: Type.Integer({ minimum: 0 }),
  rejected: Type.Integer({ minimum: 0 }),
  disputed: Type.Integer({ minimum: 0 }),
  unverified: Type.Integer({ minimum: 0 }),
  quarantinedWorkers: Type.Array(Type.String()),
});
export type VerificationStatus = Static<typeof VerificationStatusSchema>;
