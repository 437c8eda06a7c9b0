import type { StatusResponse } from '@netbreeder/shared-types';
import { fourDigits } from '../champion/regression-scores.js';

export const pct = (v: number | null | undefined): string => (v == null ? '–' : `${(v * 100).toFixed(1)}%`);

export const clock = (seconds: number): string => {
  const s = Math.max(0, Math.floor(seconds));
  return `${String(Math.floor(s / 60)).padStart(2, '0')}:${String(s % 60).padStart(2, '0')}`;
};

/** The best validation score so far: an accuracy, or for a regression run its RMSE in the target's units. */
export const bestScore = (s: StatusResponse): string =>
  s.best?.valRegression ? `best val RMSE ${fourDigits(s.best.valRegression.rmse)} ${s.run?.target ?? ''}`.trimEnd() : `best val ${pct(s.best?.valAccuracy)}`;

/** A champion's test score in words: accuracy, or RMSE · MAE · R² beside the predict-the-mean baseline. */
export function championScore(c: NonNullable<StatusResponse['champion']>): string {
  const r = c.testRegression;
  if (!r) return `${pct(c.testAccuracy)} test · ${pct(c.valAccuracy)} val`;
  return `test RMSE ${fourDigits(r.rmse)} · MAE ${fourDigits(r.mae)} · R² ${r.r2.toFixed(3)} (predicting the training mean: RMSE ${fourDigits(r.baselineRmse)})`;
}

/** One live progress line: `[02:10] 41 done · 2 running · 0 failed · best 91.2% · 18.5/min · 2 workers`. */
export function progressLine(s: StatusResponse): string {
  const alive = s.workers.filter((w) => w.alive).length;
  const e = s.evaluations;
  return [
    `[${clock(s.run?.elapsedSeconds ?? 0)}] ${s.run?.phase ?? s.run?.state ?? 'no run'}`,
    `${e.done} done`,
    `${e.running} running`,
    `${e.queued} queued`,
    `${e.failed} failed`,
    bestScore(s),
    `${s.throughput.perMinuteLastMinute.toFixed(0)}/min last minute (${s.throughput.perMinuteSinceStart.toFixed(1)}/min overall)`,
    `${alive} worker${alive === 1 ? '' : 's'} alive`,
  ].join(' · ');
}

/** A compact multi-line status for `netbreeder status`. */
export function statusTable(s: StatusResponse): string {
  const lines = [progressLine(s)];
  if (s.run) lines.push(`run ${s.run.id} "${s.run.name}" · ${s.run.algorithm} · seed ${s.run.seed} · budget ${s.run.maxEvaluations} evaluations / ${s.run.maxMinutes} min`);
  if (s.run?.target) lines.push(`regression: predicts "${s.run.target}"; RMSE and MAE are in its units`);
  if (s.best) lines.push(`best so far: ${s.best.valRegression ? `val RMSE ${fourDigits(s.best.valRegression.rmse)} · R² ${s.best.valRegression.r2.toFixed(3)}` : `${pct(s.best.valAccuracy)} val`} · ${s.best.paramCount} params · ${s.best.summary}`);
  if (s.champion) lines.push(`champion: ${championScore(s.champion)} · ${s.champion.paramCount} params · ${s.champion.summary}`);
  if (s.accounting) {
    const a = s.accounting.total;
    lines.push(`CPU: ${a.cpuSeconds.toFixed(0)} s over ${a.evaluations} trainings · energy ${a.wattHours.toFixed(2)} Wh${a.assumedWattHours > 0 ? ` (${a.assumedWattHours.toFixed(2)} Wh at the assumed ${s.accounting.defaultWatts} W per core)` : ''}`);
  }
  if (s.verification) {
    const v = s.verification;
    lines.push(`verification: ${v.confirmed} confirmed · ${v.rejected} rejected · ${v.disputed} disputed · ${v.unverified} unverified · ${v.open} open${v.quarantinedWorkers.length ? ` · quarantined: ${v.quarantinedWorkers.join(', ')}` : ''}`);
  }
  if (s.workers.length) {
    lines.push('', 'worker                          backend  state     done  samples/s  last seen');
    for (const w of s.workers) {
      lines.push(
        `${w.workerId.padEnd(31).slice(0, 31)} ${(w.backend ?? '–').padEnd(8)} ${(w.trust?.quarantined ? 'quarantined' : w.alive ? w.state : 'gone').padEnd(9)} ${String(w.evaluationsDone).padStart(4)}  ${w.samplesPerSecond.toFixed(0).padStart(9)}  ${w.secondsSinceHeartbeat.toFixed(0)} s ago`,
      );
    }
  }
  return lines.join('\n');
}
