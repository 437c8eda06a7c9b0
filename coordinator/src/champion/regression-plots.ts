import { axesSvg, niceTicks, scale, type Axis } from './svg-axes.js';

/**
 * The report's two pictures of a regression champion on the test split, as inline SVG (no
 * scripts): predicted against actual (the diagonal is a perfect prediction) and the histogram of
 * residuals (predicted − actual), each with tick values and a title on both axes. Pure.
 */
const W = 380;
const H = 280;
const FRAME = { left: 58, top: 10, right: W - 14, bottom: H - 44 };

export function predictedActualSvg(actual: ArrayLike<number>, predicted: ArrayLike<number>, column: string): string {
  const n = Math.min(actual.length, predicted.length);
  let lo = Infinity;
  let hi = -Infinity;
  for (let i = 0; i < n; i++) for (const v of [actual[i]!, predicted[i]!]) if (Number.isFinite(v)) (lo = Math.min(lo, v), (hi = Math.max(hi, v)));
  if (!Number.isFinite(lo)) (lo = 0, (hi = 1));
  if (!(hi > lo)) hi = lo + 1;
  const xAxis: Axis = { lo, hi, title: `actual ${column}` };
  const yAxis: Axis = { lo, hi, title: `predicted ${column}` };
  const x = scale(xAxis, FRAME.left, FRAME.right);
  const y = scale(yAxis, FRAME.bottom, FRAME.top);
  const dots = Array.from({ length: n }, (_, i) => (Number.isFinite(predicted[i]!) ? `<circle cx="${x(actual[i]!).toFixed(1)}" cy="${y(predicted[i]!).toFixed(1)}" r="2.2" class="dot"/>` : '')).join('');
  return `<svg xmlns="http://www.w3.org/2000/svg" width="${W}" height="${H}" role="img" aria-label="predicted against actual">
${axesSvg(FRAME, xAxis, yAxis)}
<line x1="${x(lo)}" y1="${y(lo)}" x2="${x(hi)}" y2="${y(hi)}" class="diag"/>${dots}
</svg>`;
}

export function residualHistogramSvg(actual: ArrayLike<number>, predicted: ArrayLike<number>, bins = 20): string {
  const residuals: number[] = [];
  for (let i = 0; i < Math.min(actual.length, predicted.length); i++) if (Number.isFinite(predicted[i]!)) residuals.push(predicted[i]! - actual[i]!);
  const m = Math.max(1e-12, ...residuals.map(Math.abs));
  const counts = new Array<number>(bins).fill(0);
  for (const r of residuals) counts[Math.min(bins - 1, Math.floor(((r + m) / (2 * m)) * bins))]!++;
  const top = Math.max(1, ...counts);
  const xAxis: Axis = { lo: -m, hi: m, title: `predicted − actual (${residuals.length} rows)` };
  const yAxis: Axis = { lo: 0, hi: top, title: 'rows', ticks: niceTicks(0, top, Math.min(5, top)).filter(Number.isInteger) };
  const y = scale(yAxis, FRAME.bottom, FRAME.top);
  const bw = (FRAME.right - FRAME.left) / bins;
  const bars = counts.map((c, k) => `<rect x="${(FRAME.left + k * bw).toFixed(1)}" y="${y(c).toFixed(1)}" width="${(bw - 1).toFixed(1)}" height="${(FRAME.bottom - y(c)).toFixed(1)}" class="bar"/>`).join('');
  const zero = scale(xAxis, FRAME.left, FRAME.right)(0);
  return `<svg xmlns="http://www.w3.org/2000/svg" width="${W}" height="${H}" role="img" aria-label="residual histogram">
${bars}
${axesSvg(FRAME, xAxis, yAxis)}
<line x1="${zero}" y1="${FRAME.top}" x2="${zero}" y2="${FRAME.bottom}" class="diag"/>
</svg>`;
}
