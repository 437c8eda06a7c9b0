import type { StatusResponse } from '@netbreeder/shared-types';
import type { RunManager } from './run-manager.js';
import { trustStatus } from '../trust/trust-status.js';
import { referenceComparison } from '../champion/reference-comparison.js';
import { championTestRegression } from '../champion/regression-scores.js';
import { runPhase } from '../store/run-lifecycle.js';

const iso = (ms: number) => new Date(ms).toISOString();

/**
 * Minutes a run has searched (to its end, once ended), at least one second's worth so that a
 * rate over a just-started run stays finite. GET /status and /metrics both use it.
 */
export function runMinutes(run: { searchStartedAt: number | null; createdAt: number; finishedAt: number | null }, now: number): number {
  return Math.max(((run.finishedAt ?? now) - (run.searchStartedAt ?? run.createdAt)) / 60_000, 1 / 60);
}

/** Builds GET /status from the store (the truth) and the run manager's view of worker liveness. */
export function buildStatus(manager: RunManager, meta: { version: string; startedAt: number }, now = Date.now()): StatusResponse {
  const store = manager.store;
  const run = manager.currentRun() ?? store.listRuns()[0] ?? null;
  const counts = run ? store.counts(run.id, 'search') : { queued: 0, running: 0, done: 0, failed: 0 };
  const start = run ? (run.searchStartedAt ?? run.createdAt) : now;
  const end = run?.finishedAt ?? now;
  const elapsedMinutes = run ? runMinutes(run, now) : 1;
  // The best result that counts: not from a quarantined worker, not failed verification.
  const best = run ? manager.verifier.bestResult(run.id) : undefined;
  const trust = trustStatus(manager.verifier, run);
  const champion = run ? store.getChampion(run.id) : null;
  const championGenome = champion ? store.getGenome(champion.genomeHash) : null;
  return {
    coordinator: { version: meta.version, startedAt: iso(meta.startedAt), uptimeSeconds: (now - meta.startedAt) / 1000 },
    run: run
      ? {
          id: run.id,
          name: run.name,
          state: run.state,
          phase: runPhase(run.state, manager.searchBudgetSpent(run), trust.run.verification?.open ?? 0),
          algorithm: run.config.search.algorithm,
          seed: run.seed,
          createdAt: iso(run.createdAt),
          maxEvaluations: run.config.budget.maxEvaluations,
          maxMinutes: run.config.budget.maxMinutes,
          elapsedSeconds: (end - start) / 1000,
          ...(run.dataset.manifest.target ? { target: run.dataset.manifest.target.column } : {}),
        }
      : null,
    evaluations: counts,
    throughput: {
      perMinuteLastMinute: run ? store.doneSince(run.id, now - 60_000) : 0,
      perMinuteSinceStart: run ? counts.done / elapsedMinutes : 0,
    },
    workers: store.listWorkers().map(({ heartbeat: hb, lastSeenAt }) => ({
      workerId: hb.workerId,
      host: hb.host,
      cores: hb.cores,
      backend: hb.backend,
      state: hb.state,
      alive: manager.workers.isAlive(lastSeenAt) && hb.state !== 'stopped',
      currentEvaluationId: hb.currentEvaluationId,
      evaluationsDone: hb.evaluationsDone,
      samplesPerSecond: hb.samplesPerSecond,
      lastHeartbeatAt: iso(lastSeenAt),
      secondsSinceHeartbeat: (now - lastSeenAt) / 1000,
      ...trust.worker(hb),
    })),
    best: best
      ? {
          genomeHash: best.genomeHash,
          evaluationId: best.id,
          ...(run?.dataset.manifest.target
            ? { valFitness: best.valAccuracy!, ...(best.result?.valRegression ? { valRegression: best.result.valRegression } : {}) }
            : { valAccuracy: best.valAccuracy! }),
          valLoss: best.result?.valLoss ?? 0,
          paramCount: best.params,
          flops: best.flops,
          summary: best.summary,
          genome: best.genome,
        }
      : null,
    champion:
      champion && championGenome
        ? {
            genomeHash: champion.genomeHash,
            evaluationId: champion.evaluationId,
            ...(run!.dataset.manifest.target
              ? { valFitness: champion.valAccuracy, testFitness: champion.testAccuracy, ...championTestRegression(store, run!.id, champion.evaluationId) }
              : { valAccuracy: champion.valAccuracy, testAccuracy: champion.testAccuracy }),
            testLoss: champion.testLoss,
            paramCount: championGenome.params,
            flops: championGenome.flops,
            summary: championGenome.summary,
          }
        : null,
    ...(run ? { reference: referenceComparison(store, run.id) } : {}),
    ...trust.run,
  };
}
