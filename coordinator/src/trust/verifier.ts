import { Value } from '@sinclair/typebox/value';
import { RunConfigSchema, evaluationResultValidator, type EvaluationJob, type EvaluationResult, type RunConfig } from '@netbreeder/shared-types';
import type { Logger } from '../logger.js';
import type { EvaluationQueue, FinishedJob } from '../queue/evaluation-queue.js';
import type { EvaluationRecord, RunRecord, RunStore } from '../store/run-store.js';
import { TrustStore, type VerificationPurpose, type VerificationRecord } from '../store/trust-store.js';
import { decideVerification, isSpotChecked, quarantineDecision, reliability, type Opinion, type Verdict } from './trust-rules.js';

export type VerificationSettings = RunConfig['verification'];

/** A run's verification settings; runs stored before verification existed get the defaults. */
export function verificationSettings(config: RunConfig): VerificationSettings {
  return (config.verification as VerificationSettings | undefined) ?? (Value.Default(RunConfigSchema.properties.verification, {}) as VerificationSettings);
}

export interface VerifierOptions {
  store: RunStore;
  queue: EvaluationQueue;
  log: Logger;
  now: () => number;
  /** True when a worker is alive now (recent heartbeat, not stopped, not revoked) that is none of `excluded`. */
  liveWorkerBesides: (excluded: readonly string[]) => boolean;
  /** Called once when a worker is quarantined (the run manager drops its results from the search). */
  onQuarantine: (workerId: string, runId: string) => void;
}

/**
 * A verification with no eligible live worker (every live worker is excluded) gives up after this
 * long instead of the full timeout (workers heartbeat every 5 s, so a live one is seen by then): a run with one worker waits 10 s, not `timeoutSeconds`.
 */
const NO_OTHER_WORKER_GRACE_MS = 10_000;

const opinionOf = (r: EvaluationResult): Opinion => ({ workerId: r.workerId, backend: r.backend, valAccuracy: r.valAccuracy!, valLoss: r.valLoss!, samplesSeen: r.samplesSeen, ...(r.valRegression ? { valRmse: r.valRegression.rmse } : {}) });

/**
 * Replicated verification at the coordinator: re-runs chosen search results on other workers,
 * decides on them with the pure rules of ./trust-rules.ts, keeps each worker's reliability score
 * and quarantines workers that keep failing. Every decision is written to the store and to the
 * run's event log (`verification-queued`, `verification-decision`, `worker-quarantined`, …).
 *
 * Verification jobs are jobs of their own (ids `<evaluation id>-v1`, `-v2`), outside the run's
 * evaluations. Each names the workers that must not run it (`excludeWorkers`); a worker so named
 * hands the job back to the queue untouched (see the worker agent). The alternative, letting any
 * worker train it and rejecting a result from the wrong worker afterwards, would waste a whole
 * training each time and could loop when only the excluded worker is free.
 */
export class Verifier {
  readonly trust: TrustStore;
  private quarantined: Set<string> | null = null;

  constructor(private readonly o: VerifierOptions) {
    this.trust = new TrustStore(o.store);
  }

  isQuarantined(workerId: string): boolean {
    return this.quarantinedIds().has(workerId);
  }

  /** The quarantined workers (read from the store once, then kept up to date here). */
  private quarantinedIds(): Set<string> {
    this.quarantined ??= new Set(this.trust.quarantinedWorkers());
    return this.quarantined;
  }

  /** True when a verification job has this id. */
  owns(jobId: string): boolean {
    return this.trust.getVerification(jobId) !== null;
  }

  /**
   * Whether a done search result may count for the champion: not from a quarantined worker, and
   * not rejected or disputed by verification.
   */
  counts(ev: EvaluationRecord): boolean {
    if (!ev.result || this.isQuarantined(ev.result.workerId)) return false;
    const verdict = this.trust.getVerdict(ev.id)?.verdict;
    return verdict !== 'rejected' && verdict !== 'disputed';
  }

  /**
   * The run's best search result that counts (see {@link counts}), for `/status` and `/metrics`:
   * the top row nearly always does; only when it does not are more read.
   */
  bestResult(runId: string): ReturnType<RunStore['topEvaluations']>[number] | undefined {
    const [top] = this.o.store.topEvaluations(runId, 1);
    return top && !this.counts(top) ? this.o.store.topEvaluations(runId, 50).find((e) => this.counts(e)) : top;
  }

  /** After a search result was recorded: a seeded draw decides whether it is spot-checked. */
  async afterSearchResult(run: RunRecord, evaluationId: string): Promise<void> {
    const s = verificationSettings(run.config);
    if (!isSpotChecked(run.seed, evaluationId, s.spotCheckFraction)) return;
    if (this.trust.verificationsOf(evaluationId).length > 0) return;
    await this.ask(run, evaluationId, 1, 'spot-check');
  }

  /**
   * Before the champion phase: every champion candidate's result must have a final verdict
   * (confirmed, or unverified after the timeout) and no verification may still be open, since an
   * open one may yet quarantine a worker. Queues what is missing; true once ready.
   */
  async readyForChampion(run: RunRecord, candidates: ReadonlyArray<{ sourceEvaluationId: string }>): Promise<boolean> {
    const s = verificationSettings(run.config);
    if (s.championCandidates) {
      for (const c of candidates) {
        if (this.trust.getVerdict(c.sourceEvaluationId) || this.trust.verificationsOf(c.sourceEvaluationId).length > 0) continue;
        await this.ask(run, c.sourceEvaluationId, 1, 'champion-candidate');
      }
    }
    return this.trust.openVerificationCount(run.id) === 0;
  }

  /** Queues one more opinion on `evaluationId` (excluding every worker that already gave one and every quarantined worker). */
  private async ask(run: RunRecord, evaluationId: string, opinion: 1 | 2, purpose: VerificationPurpose): Promise<void> {
    const source = this.o.store.getEvaluation(evaluationId);
    if (!source?.result) return;
    const r = source.result;
    const earlier = this.trust.verificationsOf(evaluationId).map((v) => v.workerId).filter((w): w is string => w !== null);
    const excludeWorkers = [...new Set([r.workerId, ...earlier, ...this.trust.quarantinedWorkers()])];
    // A re-run uploads no checkpoints (no later attempt resumes it) and starts from epoch 0: a
    // resumed training ends bit-identical to an uninterrupted one. Inherited weights stay, since
    // the result being checked started from them.
    const { checkpoints: _uploads, resume: _resume, ...sourceJob } = source.job;
    const job: EvaluationJob = {
      ...sourceJob,
      evaluationId: `${evaluationId}-v${opinion}`,
      verifies: evaluationId,
      excludeWorkers,
      // The same epochs and seed; a result cut short by its time limit is re-run on exactly as many
      // samples, and the verifier gets twice the time, so a slower PC still reaches the same point.
      budget: {
        epochs: source.job.budget.epochs,
        maxSeconds: Math.min(86_400, source.job.budget.maxSeconds * 2),
        ...(r.stoppedBy !== 'epochs' && r.samplesSeen > 0 ? { maxSamples: r.samplesSeen } : {}),
      },
    };
    const now = this.o.now();
    this.o.store.transaction(() => {
      this.trust.addVerification({ id: job.evaluationId, runId: run.id, sourceEvaluationId: evaluationId, opinion, purpose, job, now });
      this.o.store.logEvent(run.id, 'verification-queued', { evaluationId, verificationId: job.evaluationId, opinion, purpose, excludeWorkers }, now);
    });
    this.o.log.info({ evaluationId, verificationId: job.evaluationId, opinion, purpose }, 'verification queued');
    await this.o.queue.add(job);
  }

  /** Records a finished verification job (once) and decides on its result; the job leaves Redis. */
  async reconcile(job: FinishedJob): Promise<void> {
    const v = this.trust.getVerification(job.id)!;
    await this.o.queue.remove(job.id);
    if (v.state !== 'queued') return; // timed out already, or a duplicate delivery
    const run = this.o.store.getRun(v.runId)!;
    const now = this.o.now();
    const late = now - v.queuedAt > verificationSettings(run.config).timeoutSeconds * 1000;
    if (job.state === 'failed') {
      const reason = job.failedReason ?? 'failed';
      if (!job.unrecoverable && !late) {
        this.o.store.logEvent(v.runId, 'verification-retried', { verificationId: v.id, reason });
        await this.o.queue.add(v.job);
        return;
      }
      await this.closeAndDecide(v, { state: 'failed', error: reason });
      return;
    }
    const problem = this.resultProblem(v, job.returnvalue);
    if (problem) {
      this.o.store.logEvent(v.runId, 'verification-result-refused', { verificationId: v.id, reason: problem });
      this.o.log.warn({ verificationId: v.id, reason: problem }, 'verification result refused');
      if (late) await this.closeAndDecide(v, { state: 'failed', error: problem });
      else await this.o.queue.add(v.job);
      return;
    }
    const result = job.returnvalue as EvaluationResult;
    const source = this.o.store.getEvaluation(v.sourceEvaluationId)!.result!;
    if (result.samplesSeen !== source.samplesSeen) {
      // A slow verifier cut short by its own time limit is no opinion at all, not a disagreement.
      const why = `the verifier ${result.workerId} trained on ${result.samplesSeen} samples, not ${source.samplesSeen} (stopped by ${result.stoppedBy}); no opinion`;
      await this.closeAndDecide(v, { state: 'failed', error: why });
      return;
    }
    await this.closeAndDecide(v, { state: 'done', result });
  }

  private resultProblem(v: VerificationRecord, value: unknown): string | null {
    const issues = evaluationResultValidator.issues(value);
    if (issues.length) return issues.slice(0, 5).map((i) => `${i.path || '(root)'} ${i.message}`).join('; ');
    const r = value as EvaluationResult;
    if (r.evaluationId !== v.id) return `result names ${r.evaluationId}, not ${v.id}`;
    if (v.job.excludeWorkers?.includes(r.workerId)) return `worker ${r.workerId} was excluded from this verification but ran it`;
    if (this.isQuarantined(r.workerId)) return `worker ${r.workerId} is quarantined`;
    if (r.valAccuracy === null || r.valLoss === null) return 'a verification result needs validation accuracy and loss';
    return null;
  }

  /** Gives up verifications that waited past the timeout (or 10 s with no other live worker to run them). */
  async checkTimeouts(run: RunRecord): Promise<void> {
    const timeoutMs = verificationSettings(run.config).timeoutSeconds * 1000;
    const now = this.o.now();
    // Only those that waited past the grace period, the least a verification waits before it can
    // time out, are read (this runs on every pass).
    const open = this.trust.openVerifications(run.id, now - Math.min(timeoutMs, NO_OTHER_WORKER_GRACE_MS));
    if (!open.length) return;
    // Whether another worker is alive matters only for a verification that has waited past the
    // grace period: asked then, as one indexed query (with a thousand workers, listing them all on
    // every pass cost more than the results).
    const someoneElse = (v: VerificationRecord) => this.o.liveWorkerBesides([...(v.job.excludeWorkers ?? []), ...this.quarantinedIds()]);
    for (const v of open) {
      const waited = now - v.queuedAt;
      if (waited <= timeoutMs && someoneElse(v)) continue;
      const why = waited > timeoutMs ? `no result within ${timeoutMs / 1000} s` : 'no worker other than the excluded ones is alive';
      await this.o.queue.remove(v.id).catch(() => undefined); // a job being trained cannot be removed; its late result is ignored
      this.o.log.warn({ verificationId: v.id, why }, 'verification timed out');
      await this.closeAndDecide(v, { state: 'timed-out', error: why });
    }
  }

  /** Closes one verification and decides on its source result with every opinion so far. */
  private async closeAndDecide(v: VerificationRecord, outcome: { state: 'done'; result: EvaluationResult } | { state: 'failed' | 'timed-out'; error: string }): Promise<void> {
    const run = this.o.store.getRun(v.runId)!;
    const source = this.o.store.getEvaluation(v.sourceEvaluationId)!;
    const now = this.o.now();
    let verdict: Verdict | null = null;
    const quarantinedNow: string[] = [];
    this.o.store.transaction(() => {
      if (!this.trust.finishVerification(v.id, outcome, now)) return;
      if (outcome.state !== 'done') this.o.store.logEvent(v.runId, 'verification-ended', { verificationId: v.id, evaluationId: source.id, state: outcome.state, reason: outcome.error }, now);
      const all = this.trust.verificationsOf(source.id);
      if (all.some((x) => x.state === 'queued')) return;
      const opinions = all.filter((x) => x.state === 'done').map((x) => opinionOf(x.result!));
      verdict = decideVerification(opinionOf(source.result!), opinions, opinions.length < all.length);
      if (verdict.kind === 'ask-third-opinion') {
        this.o.store.logEvent(v.runId, 'verification-decision', { evaluationId: source.id, workerId: source.result!.workerId, verdict: verdict.kind, reason: verdict.reason }, now);
        return;
      }
      this.trust.saveVerdict({ evaluationId: source.id, runId: v.runId, workerId: source.result!.workerId, verdict: verdict.kind, reason: verdict.reason, decidedAt: now });
      for (const w of verdict.credit) this.trust.addTrust(w, { agreed: 1 });
      for (const w of verdict.blame) {
        const t = this.trust.addTrust(w, { failed: 1 });
        const q = quarantineDecision(t, verificationSettings(run.config));
        if (q.quarantine && this.trust.quarantine(w, q.reason, now)) {
          quarantinedNow.push(w);
          this.o.store.logEvent(v.runId, 'worker-quarantined', { workerId: w, reason: q.reason, reliability: reliability(t) }, now);
        }
      }
      this.o.store.logEvent(
        v.runId,
        'verification-decision',
        { evaluationId: source.id, workerId: source.result!.workerId, verdict: verdict.kind, reason: verdict.reason, credit: verdict.credit, blame: verdict.blame, opinions: [opinionOf(source.result!), ...opinions] },
        now,
      );
    });
    const decided = verdict as Verdict | null;
    if (!decided) return;
    this.o.log.info({ evaluationId: source.id, verdict: decided.kind, reason: decided.reason }, 'verification decision');
    for (const w of quarantinedNow) {
      this.quarantined?.add(w);
      this.o.log.warn({ workerId: w }, 'worker quarantined: its results no longer count');
      this.o.onQuarantine(w, v.runId);
    }
    if (decided.kind === 'ask-third-opinion') await this.ask(run, source.id, 2, v.purpose);
  }

  /** A stopped run: its open verifications leave the queue and end without a verdict. */
  async cancel(runId: string): Promise<void> {
    for (const v of this.trust.openVerifications(runId)) {
      await this.o.queue.remove(v.id).catch(() => undefined); // one being trained cannot be removed; its result is ignored
      this.trust.finishVerification(v.id, { state: 'failed', error: 'run stopped' }, this.o.now());
    }
  }

  /** Puts every open verification of the run back in the queue (after Redis lost it). */
  async rebuildQueue(runId: string): Promise<void> {
    for (const v of this.trust.openVerifications(runId)) await this.o.queue.add(v.job);
  }
}
