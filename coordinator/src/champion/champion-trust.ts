import type { AccountingStatus, CpuFigures } from '@netbreeder/shared-types';
import type { ChampionRecord, RunRecord, RunStore } from '../store/run-store.js';
import { TrustStore, type VerdictKind } from '../store/trust-store.js';
import { accountingByWorker, summarizeAccounting } from '../trust/accounting.js';
import { reliability } from '../trust/trust-rules.js';

/** What the champion report says about verification and CPU accounting. */
export interface ChampionTrust {
  /** The verdict on the search result the champion was chosen by; "unverified" when none was reached. */
  verification: { verdict: VerdictKind; reason: string; verifiedBy: string[] };
  quarantinedWorkers: Array<{ workerId: string; reason: string; reliability: number }>;
  accounting: AccountingStatus;
  workers: Array<{ workerId: string } & CpuFigures>;
  /** CPU-seconds of the champion's search evaluation and of its final training (null: not measured). */
  championCpuSeconds: { search: number | null; finalTraining: number | null };
}

export function championTrust(store: RunStore, run: RunRecord, champion: ChampionRecord): ChampionTrust {
  const trust = new TrustStore(store);
  const verdict = trust.getVerdict(champion.sourceEvaluationId);
  const verifiedBy = trust
    .verificationsOf(champion.sourceEvaluationId)
    .filter((v) => v.state === 'done')
    .map((v) => v.workerId!);
  const rows = trust.cpuUsage(run.id);
  return {
    verification: verdict
      ? { verdict: verdict.verdict, reason: verdict.reason, verifiedBy }
      : { verdict: 'unverified', reason: 'no verification of this result was made (verification of champion candidates is off)', verifiedBy: [] },
    quarantinedWorkers: trust
      .allTrust()
      .filter((t) => t.quarantinedAt !== null)
      .map((t) => ({ workerId: t.workerId, reason: t.quarantineReason ?? '', reliability: reliability(t) })),
    accounting: summarizeAccounting(rows),
    workers: [...accountingByWorker(rows)].map(([workerId, f]) => ({ workerId, ...f })),
    championCpuSeconds: { search: store.getEvaluation(champion.sourceEvaluationId)?.result?.cpuSeconds ?? null, finalTraining: champion.result.cpuSeconds ?? null },
  };
}

const sec = (v: number | null) => (v == null ? 'not measured' : `${v.toFixed(1)} CPU-s`);
const wh = (f: CpuFigures) => `${f.wattHours.toFixed(3)} Wh${f.assumedWattHours > 0 ? ` (${f.assumedWattHours.toFixed(3)} Wh of it assumed)` : ''}`;

/** Rows of (label, value) shared by the Markdown and HTML reports. */
export function championTrustRows(t: ChampionTrust): { verification: Array<[string, string]>; accounting: Array<[string, string]>; workers: string[][] } {
  const a = t.accounting;
  return {
    verification: [
      ['verification of its search result', `${t.verification.verdict}${t.verification.verifiedBy.length ? ` (re-run by ${t.verification.verifiedBy.join(', ')})` : ''}: ${t.verification.reason}`],
      ['quarantined workers', t.quarantinedWorkers.length ? t.quarantinedWorkers.map((q) => `${q.workerId} (reliability ${q.reliability.toFixed(2)}: ${q.reason})`).join('; ') : 'none'],
    ],
    accounting: [
      ['run total', `${a.total.cpuSeconds.toFixed(1)} CPU-s over ${a.total.evaluations} trainings, ${wh(a.total)}`],
      ['search', `${a.search.cpuSeconds.toFixed(1)} CPU-s over ${a.search.evaluations} evaluations (${a.search.cpuSecondsPerEvaluation.toFixed(1)} per evaluation), ${wh(a.search)}`],
      ['verification', `${a.verification.cpuSeconds.toFixed(1)} CPU-s over ${a.verification.evaluations} re-runs, ${wh(a.verification)}`],
      ['champion trainings', `${a.champion.cpuSeconds.toFixed(1)} CPU-s over ${a.champion.evaluations}, ${wh(a.champion)}`],
      ['this champion', `search evaluation ${sec(t.championCpuSeconds.search)}, final training ${sec(t.championCpuSeconds.finalTraining)}`],
      ['energy estimate', a.energyNote],
    ],
    workers: t.workers.map((w) => [w.workerId, String(w.evaluations), w.cpuSeconds.toFixed(1), wh(w)]),
  };
}

/** The report's "Verification" and "CPU time and energy" sections, in Markdown. */
export function championTrustMarkdown(t: ChampionTrust): string[] {
  const r = championTrustRows(t);
  const table = (rows: Array<[string, string]>) => ['| | |', '|---|---|', ...rows.map(([k, v]) => `| ${k} | ${v.replace(/\|/g, '\\|')} |`)];
  return [
    '## Verification',
    '',
    ...table(r.verification),
    '',
    '## CPU time and energy',
    '',
    ...table(r.accounting),
    '',
    '| worker | trainings | CPU-seconds | energy |',
    '|---|---|---|---|',
    ...r.workers.map((w) => `| ${w.join(' | ')} |`),
    '',
  ];
}

/** The same sections as HTML (`esc` escapes text). */
export function championTrustHtml(t: ChampionTrust, esc: (s: string) => string): string {
  const r = championTrustRows(t);
  const table = (rows: Array<[string, string]>) => `<table>${rows.map(([k, v]) => `<tr><th>${esc(k)}</th><td>${esc(v)}</td></tr>`).join('\n')}</table>`;
  return `<h2>Verification</h2>
${table(r.verification)}
<h2>CPU time and energy</h2>
${table(r.accounting)}
<table><tr><th>worker</th><th>trainings</th><th>CPU-seconds</th><th>energy</th></tr>
${r.workers.map((w) => `<tr>${w.map((v) => `<td>${esc(v)}</td>`).join('')}</tr>`).join('\n')}</table>
`;
}
