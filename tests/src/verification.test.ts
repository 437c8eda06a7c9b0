import { cpus } from 'node:os';
import { afterAll, describe, expect, it } from 'vitest';
import type { RunConfig, StatusResponse } from '@netbreeder/shared-types';
import { TrustStore, replayRun } from '@netbreeder/coordinator';
import { TestCluster, waitFor } from './support/harness.js';
import { smallRunConfig } from './support/small-run.js';

/**
 * Replicated verification against a lying worker (test-only mode: it trains for real and reports
 * validation accuracy + 0.3), with two honest workers, real training on the demo tiles. Every
 * result is spot-checked here (fraction 1) so the liar is caught within a few results.
 */
describe('verification, quarantine and CPU accounting', () => {
  let cluster: TestCluster;
  let runId: string;
  afterAll(async () => {
    await cluster?.stop();
  });

  it('catches the lying worker, quarantines it, and never makes a champion of its results', async () => {
    process.env.NETBREEDER_TEST_MODE = '1'; // the lying worker is refused without it
    cluster = await TestCluster.start('verify');
    const config: RunConfig = {
      ...smallRunConfig('verification', 10, 23),
      // Minimal first members train in a moment, so every spot check settles within its timeout
      // on a loaded machine; with slower hand-made ones a check of the liar's result could time
      // out, and an unverified result still competes (seen once in a full run).
      search: { ...smallRunConfig('verification', 10, 23).search, start: 'minimal' },
      champion: { maxSeconds: 60, topK: 2 },
      verification: { spotCheckFraction: 1, championCandidates: true, timeoutSeconds: 120, quarantineAfterFailures: 2, quarantineBelowReliability: 0.5 },
    };
    cluster.spawnWorker('honest-a', ['--watts', '30']);
    cluster.spawnWorker('honest-b');
    cluster.spawnWorker('liar', ['--test-only-inflate-accuracy', '0.3']);
    await cluster.waitForReadyWorkers(3);
    const store = cluster.coordinator.store;
    const trust = new TrustStore(store);
    const run = await cluster.coordinator.startRun(config);
    runId = run.id;
    await waitFor('the run to finish', () => ['finished', 'failed'].includes(store.getRun(run.id)!.state), 300_000, 500);
    expect(store.getRun(run.id)!.state).toBe('finished');

    const liar = trust.trust('liar');
    expect(liar.quarantinedAt).not.toBeNull();
    expect(liar.failed).toBeGreaterThanOrEqual(2);
    expect(trust.trust('honest-a').quarantinedAt).toBeNull();
    expect(trust.trust('honest-b').quarantinedAt).toBeNull();
    const quarantined = store.events(run.id, 'worker-quarantined').map((e) => e.detail as { workerId: string; reason: string });
    expect(quarantined.map((q) => q.workerId)).toEqual(['liar']);
    expect(quarantined[0]!.reason).toMatch(/verified results failed/);
    // The quarantine is in the decision log (its results taken out of the search), so the run still replays exactly.
    const forgets = store.searchSteps(run.id).filter((st) => st.kind === 'forget');
    expect(forgets.length).toBe(1);
    expect(forgets[0]!.decisions[0]).toMatchObject({ kind: 'results-forgotten' });
    const replay = replayRun(store, run.id);
    expect(replay.disagreement).toBeNull();
    expect(replay.agree).toBe(true);

    // Every verification decision is logged with its reason; the liar is the one blamed.
    const decisions = store.events(run.id, 'verification-decision').map((e) => e.detail as { verdict: string; reason: string; blame?: string[]; workerId: string });
    expect(decisions.length).toBeGreaterThan(0);
    for (const d of decisions) expect(d.reason.length).toBeGreaterThan(10);
    const blamed = new Set(decisions.flatMap((d) => d.blame ?? []));
    expect([...blamed]).toEqual(['liar']);
    expect(decisions.some((d) => d.verdict === 'rejected' && d.workerId === 'liar')).toBe(true);

    // The champion and every candidate come from honest results.
    const champion = store.getChampion(run.id)!;
    expect(store.getEvaluation(champion.sourceEvaluationId)!.result!.workerId).not.toBe('liar');
    const round = store.events(run.id, 'champion-candidates').at(-1)!.detail as {
      candidates: Array<{ sourceEvaluationId: string; champion: boolean; ensemblePosition?: number; reference?: boolean }>;
      considered: Array<{ evaluationId: string }>;
    };
    const workerOf = (evaluationId: string) => store.getEvaluation(evaluationId)!.result!.workerId;
    const chosen = round.candidates.filter((c) => c.champion || c.ensemblePosition !== undefined);
    expect(chosen.length).toBeGreaterThan(0);
    for (const c of chosen) expect(workerOf(c.sourceEvaluationId)).not.toBe('liar');
    for (const k of round.considered) expect(workerOf(k.evaluationId)).not.toBe('liar');
    // Each chosen candidate's result was verified before its final training: confirmed by another worker (or unverified after the wait).
    for (const c of chosen) expect(['confirmed', 'unverified']).toContain(trust.getVerdict(c.sourceEvaluationId)!.verdict);
    // The reference network gets its final training whatever its search result; when the liar
    // trained it, that result was not considered (above) and its learning curve set no length.
    const lengths = store.events(run.id, 'champion-training-length').map((e) => e.detail as { sourceEvaluationId: string; rule: string });
    for (const c of round.candidates.filter((c) => c.reference && workerOf(c.sourceEvaluationId) === 'liar')) {
      expect(lengths.find((l) => l.sourceEvaluationId === c.sourceEvaluationId)!.rule).not.toBe('learning-curve');
    }

    // The quarantined worker is told, and stops taking jobs.
    await waitFor('the liar to learn it is quarantined', () => cluster.workerLogs.join('').includes('quarantined this worker'), 20_000, 250);

    // /status shows it.
    const status = (await (await fetch(`${cluster.coordinator.url}/status`)).json()) as StatusResponse;
    const liarRow = status.workers.find((w) => w.workerId === 'liar')!;
    expect(liarRow.trust).toMatchObject({ quarantined: true });
    expect(liarRow.trust!.reliability).toBeLessThan(0.5);
    expect(status.verification!.quarantinedWorkers).toEqual(['liar']);
    expect(status.verification!.rejected).toBeGreaterThanOrEqual(1);
    expect(status.best!.evaluationId).not.toBe(undefined);
    expect(store.getEvaluation(status.best!.evaluationId)!.result!.workerId).not.toBe('liar');
  }, 360_000);

  it('accounts CPU-seconds per evaluation, per worker and per run, on /status and in the report', async () => {
    const store = cluster.coordinator.store;
    const trust = new TrustStore(store);
    const status = (await (await fetch(`${cluster.coordinator.url}/status`)).json()) as StatusResponse;
    const a = status.accounting!;

    // The incremental aggregate equals the sum over every recorded result (search, champion, verification).
    const done = store.evaluations(runId).filter((e) => e.state === 'done');
    const verified = store.evaluations(runId).flatMap((e) => trust.verificationsOf(e.id)).filter((v) => v.state === 'done');
    const cpuOf = [...done.map((e) => e.result!), ...verified.map((v) => v.result!)];
    for (const r of cpuOf) {
      expect(r.cpuSeconds).toBeGreaterThan(0);
      expect(r.cpuSeconds!).toBeLessThan((r.trainSeconds + 10) * cpus().length); // CPU time of one process cannot exceed wall time × cores
    }
    expect(a.total.evaluations).toBe(cpuOf.length);
    expect(a.total.cpuSeconds).toBeCloseTo(cpuOf.reduce((t, r) => t + r.cpuSeconds!, 0), 6);
    expect(a.verification.evaluations).toBe(verified.length);
    expect(a.search.evaluations).toBe(done.filter((e) => e.kind === 'search').length);
    expect(a.energyNote).toMatch(/assumption/);

    // Per worker: the one started with --watts 30 is priced at 30 W, the others at the assumed default.
    const honestA = status.workers.find((w) => w.workerId === 'honest-a')!;
    expect(honestA).toMatchObject({ watts: 30, wattsAssumed: false });
    expect(honestA.cpu!.cpuSeconds).toBeGreaterThan(0);
    expect(honestA.cpu!.wattHours).toBeCloseTo((honestA.cpu!.cpuSeconds * 30) / 3600, 9);
    expect(honestA.cpu!.assumedWattHours).toBe(0);
    const honestB = status.workers.find((w) => w.workerId === 'honest-b')!;
    expect(honestB).toMatchObject({ watts: a.defaultWatts, wattsAssumed: true });
    expect(honestB.cpu!.assumedWattHours).toBeCloseTo(honestB.cpu!.wattHours, 9);
    const perWorker = status.workers.reduce((t, w) => t + (w.cpu?.cpuSeconds ?? 0), 0);
    expect(perWorker).toBeCloseTo(a.total.cpuSeconds, 6);

    // The champion report (Markdown and HTML) carries the verification verdict and the accounting.
    const file = async (name: string) =>
      (await fetch(`${cluster.coordinator.url}/runs/${runId}/champion/files/${name}`, { headers: { authorization: `Bearer ${cluster.coordinator.secrets.adminToken}` } })).text();
    const md = await file('report.md');
    expect(md).toContain('## Verification');
    expect(md).toMatch(/verification of its search result \| (confirmed|unverified)/);
    expect(md).toMatch(/quarantined workers \| liar \(reliability/);
    expect(md).toContain('## CPU time and energy');
    expect(md).toContain(`${a.total.cpuSeconds.toFixed(1)} CPU-s over ${a.total.evaluations} trainings`);
    expect(md).toMatch(/assumption/);
    const html = await file('report.html');
    expect(html).toContain('<h2>CPU time and energy</h2>');
    expect(html).toContain('honest-a');

    // And Prometheus reads the same aggregates.
    const metrics = await (await fetch(`${cluster.coordinator.url}/metrics`)).text();
    const sample = (line: string) => Number(metrics.split('\n').find((l) => l.startsWith(line))!.slice(line.length + 1));
    expect(sample(`netbreeder_cpu_seconds{run="${runId}",kind="search"}`)).toBeCloseTo(a.search.cpuSeconds, 6);
    expect(sample(`netbreeder_verification_verdicts{run="${runId}",verdict="rejected"}`)).toBe(status.verification!.rejected);
    expect(sample('netbreeder_workers_quarantined')).toBe(1);
  }, 60_000);
});
