/**
 * The decisions of replicated verification, pure (no I/O, no clock): when two results of one job
 * agree, what two or three opinions decide, how a worker's reliability is scored and when it is
 * quarantined, and which results are spot-checked.
 *
 * Published practice this follows in spirit (by name only): redundant computing with a quorum and
 * random spot-checking of volunteer hosts (BOINC, Anderson 2020; Sarmenta, FGCS 2002).
 */
import { createRandom, type BackendName } from '@netbreeder/shared-types';

/** One worker's figures for one job (genome, seed, budget, data). */
export interface Opinion {
  workerId: string;
  backend: BackendName;
  valAccuracy: number;
  valLoss: number;
  /** Regression runs: validation RMSE in the target's units (the result's valRegression.rmse); compared relatively instead of the fitness. */
  valRmse?: number;
  /** Training samples the worker trained on; opinions on different amounts cannot be compared. */
  samplesSeen: number;
}

/** How far two results of one job may lie apart and still agree. */
export interface Tolerance {
  /** Largest absolute difference of validation accuracy. */
  accuracy: number;
  /** Largest difference of validation loss, relative to the larger of the two. */
  relativeLoss: number;
  /** Regression: largest difference of validation RMSE, relative to the larger of the two. */
  relativeRmse: number;
  /** Where the figures come from. */
  basis: string;
}

/**
 * Measured with `npx tsx --conditions=source worker/bench/backend-agreement.ts` (2-core AMD EPYC, Node 20, tfjs 4.22;
 * linear, dense and conv networks, 4 epochs on synthetic 8×8 images, 3 seeds): wasm against wasm
 * gave identical accuracy and loss (difference 0); wasm against cpu identical accuracy and a loss
 * difference of at most 7e-6 relative. Float differences grow over longer trainings (a near-tie
 * of the argmax, a ReLU switching), so the tolerances keep a wide margin over what was measured;
 * a result inflated by a few percent is still far outside them.
 *
 * Regression (`npx tsx --conditions=source worker/bench/backend-agreement.ts --regression`, same machine: linear, dense
 * 32 and dense 64 → 32 networks with one linear head, 4 epochs on a synthetic table of 4 features
 * and a smooth target, 3 seeds): wasm against wasm identical validation RMSE (difference 0); wasm
 * against cpu at most 1.5e-7 relative RMSE and 3.0e-7 relative loss. The RMSE tolerances are half
 * the loss tolerances (RMSE is the square root of the mean squared error, so a small relative
 * change of the loss moves it by about half as much): the same wide margin over what was measured.
 * Re-measured (both commands) after dense genomes began training by the compiled step on wasm
 * (2026-12-05): wasm against wasm still identical; wasm against cpu identical accuracy, loss within
 * 6.5e-6 relative, regression RMSE within 2.6e-7 and loss within 5.2e-7 relative.
 */
export const TOLERANCES = {
  sameBackend: {
    accuracy: 0.01,
    relativeLoss: 0.001,
    relativeRmse: 0.0005,
    basis: 'same backend: measured identical (difference 0) for wasm; margin for one flipped validation sample in 100',
  },
  portable: {
    accuracy: 0.03,
    relativeLoss: 0.02,
    relativeRmse: 0.01,
    basis: 'wasm against cpu: measured identical accuracy and loss within 7e-6 relative after 4 epochs (regression: RMSE within 1.5e-7 relative); margin for longer trainings',
  },
  native: {
    accuracy: 0.05,
    relativeLoss: 0.05,
    relativeRmse: 0.025,
    basis: 'the native tensorflow backend (its own kernels, other summation orders) against another machine or backend: not measured here (it does not install offline), an assumption',
  },
} as const satisfies Record<string, Tolerance>;

/** The tolerance for results from backends `a` and `b` (order does not matter). */
export function toleranceFor(a: BackendName, b: BackendName): Tolerance {
  if (a === 'tensorflow' || b === 'tensorflow') return TOLERANCES.native; // native kernels differ by CPU (vector width, fused ops), even native against native
  if (a === b) return TOLERANCES.sameBackend;
  return TOLERANCES.portable;
}

export interface Comparison {
  agree: boolean;
  accuracyDiff: number;
  relativeLossDiff: number;
  /** Regression opinions only: their validation RMSEs' difference relative to the larger one. */
  relativeRmseDiff?: number;
  tolerance: Tolerance;
  /** One sentence for the event log. */
  reason: string;
}

const relativeDiff = (a: number, b: number): number => Math.abs(a - b) / Math.max(a, b, 1e-12);

/**
 * Whether two opinions on one job agree within the tolerance of their backends. Regression
 * opinions (both with `valRmse`) are compared on RMSE and loss, never on the fitness that the
 * `valAccuracy` field holds for them.
 */
export function compareOpinions(a: Opinion, b: Opinion): Comparison {
  const tolerance = toleranceFor(a.backend, b.backend);
  const accuracyDiff = Math.abs(a.valAccuracy - b.valAccuracy);
  const relativeLossDiff = relativeDiff(a.valLoss, b.valLoss);
  const relativeRmseDiff = a.valRmse !== undefined && b.valRmse !== undefined ? relativeDiff(a.valRmse, b.valRmse) : undefined;
  const diffs = { accuracyDiff, relativeLossDiff, ...(relativeRmseDiff === undefined ? {} : { relativeRmseDiff }) };
  const who = `${a.workerId} (${a.backend}) and ${b.workerId} (${b.backend})`;
  if (a.samplesSeen !== b.samplesSeen) {
    return { agree: false, ...diffs, tolerance, reason: `${who} trained on different amounts of data (${a.samplesSeen} and ${b.samplesSeen} samples)` };
  }
  const lossText = `loss by ${(relativeLossDiff * 100).toFixed(3)}% (tolerance ${tolerance.relativeLoss * 100}%)`;
  const agree = (relativeRmseDiff === undefined ? accuracyDiff <= tolerance.accuracy : relativeRmseDiff <= tolerance.relativeRmse) && relativeLossDiff <= tolerance.relativeLoss;
  const figures =
    relativeRmseDiff === undefined
      ? `accuracy differs by ${accuracyDiff.toFixed(4)} (tolerance ${tolerance.accuracy}), ${lossText}`
      : `validation RMSE differs by ${(relativeRmseDiff * 100).toFixed(3)}% (tolerance ${tolerance.relativeRmse * 100}%), ${lossText}`;
  return { agree, ...diffs, tolerance, reason: `${who} ${agree ? 'agree' : 'disagree'}: ${figures}` };
}

/**
 * What the opinions on one result decide.
 * - `confirmed`: the result stands; `credit` agreed with it, `blame` (a wrong verifier) did not.
 * - `rejected`: a majority of two other workers disagrees with the result; its worker is blamed.
 * - `disputed`: the result and its verifier disagree and no majority can be formed (no third
 *   worker in time, or three different answers); the result is dropped from champion candidacy,
 *   nobody is blamed because nobody can tell who was wrong.
 * - `unverified`: no other worker gave an opinion in time; the result stands, marked so.
 * - `ask-third-opinion`: one verifier disagrees; a third worker decides (a quorum of 2 of 3).
 */
export type Verdict =
  | { kind: 'confirmed' | 'rejected'; credit: string[]; blame: string[]; reason: string }
  | { kind: 'disputed' | 'unverified' | 'ask-third-opinion'; credit: []; blame: []; reason: string };

/**
 * Decides on `original` from the `opinions` of other workers so far (oldest first, at most two).
 * `timedOut`: no further opinion will come (the verification's wait is over, or no third worker
 * exists).
 */
export function decideVerification(original: Opinion, opinions: readonly Opinion[], timedOut = false): Verdict {
  const [second, third] = opinions;
  if (!second) return { kind: 'unverified', credit: [], blame: [], reason: timedOut ? 'no other worker re-ran it in time' : 'waiting for a second opinion' };
  const first = compareOpinions(original, second);
  if (first.agree) return { kind: 'confirmed', credit: [original.workerId, second.workerId], blame: [], reason: first.reason };
  if (!third) {
    return timedOut
      ? { kind: 'disputed', credit: [], blame: [], reason: `${first.reason}; no third worker decided in time` }
      : { kind: 'ask-third-opinion', credit: [], blame: [], reason: first.reason };
  }
  const withOriginal = compareOpinions(original, third);
  const withSecond = compareOpinions(second, third);
  if (withOriginal.agree && !withSecond.agree) {
    return { kind: 'confirmed', credit: [original.workerId, third.workerId], blame: [second.workerId], reason: `2 of 3 agree with the result: ${withOriginal.reason}; ${first.reason}` };
  }
  if (withSecond.agree && !withOriginal.agree) {
    return { kind: 'rejected', credit: [second.workerId, third.workerId], blame: [original.workerId], reason: `2 of 3 disagree with the result: ${withSecond.reason}; ${first.reason}` };
  }
  return { kind: 'disputed', credit: [], blame: [], reason: `no majority of 2 of 3: ${first.reason}; ${withOriginal.reason}; ${withSecond.reason}` };
}

/** A worker's verification record. */
export interface TrustCounts {
  /** Verdicts that found the worker right. */
  agreed: number;
  /** Verdicts that found the worker wrong. */
  failed: number;
}

/**
 * Reliability score in (0, 1]: (agreed + 1) / (agreed + failed + 1). A worker nobody has checked
 * scores 1 (office PCs are trusted until shown otherwise); each failure lowers it, each agreement
 * raises it back towards 1, so a rare slip on a long good record weighs little.
 */
export const reliability = (t: TrustCounts): number => (t.agreed + 1) / (t.agreed + t.failed + 1);

export interface QuarantineSettings {
  quarantineAfterFailures: number;
  quarantineBelowReliability: number;
}

/** Quarantine once `failed >= quarantineAfterFailures` and the reliability is below `quarantineBelowReliability`. */
export function quarantineDecision(t: TrustCounts, s: QuarantineSettings): { quarantine: boolean; reason: string } {
  const score = reliability(t);
  const quarantine = t.failed >= s.quarantineAfterFailures && score < s.quarantineBelowReliability;
  const reason = `${t.failed} of ${t.agreed + t.failed} verified results failed (quarantine after ${s.quarantineAfterFailures}); reliability ${score.toFixed(2)} (quarantine below ${s.quarantineBelowReliability})`;
  return { quarantine, reason };
}

/** Whether the search result `evaluationId` is spot-checked: a draw seeded by the run's seed and the id, so it replays. */
export const isSpotChecked = (runSeed: number, evaluationId: string, fraction: number): boolean =>
  fraction > 0 && createRandom(`${runSeed}:spot-check:${evaluationId}`).next() < fraction;
