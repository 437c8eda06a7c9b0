/**
 * The report's two pictures of a regression champion on the test split, as inline SVG (no
 * scripts): predicted against actual (the diagonal is a perfect prediction) and the histogram of
 * residuals (predicted − actual). Pure.
 */
const W = 360;
const H = 260;
const PAD = 40;
const num = (v: number) => String(Number(v.toPrecision(3)));

export function predictedActualSvg(actual: ArrayLike<number>, predicted: ArrayLike<number>, column: string): string {
  const n = Math.min(actual.length, predicted.length);
  let lo = Infinity;
  let hi = -Infinity;
  for (let i = 0; i < n; i++) for (const v of [actual[i]!, predicted[i]!]) if (Number.isFinite(v)) (lo = Math.min(lo, v), (hi = Math.max(hi, v)));
  if (!(hi > lo)) hi = lo + 1;
  const x = (v: number) => PAD + ((v - lo) / (hi - lo)) * (W - PAD - 10);
  const y = (v: number) => H - PAD - ((v - lo) / (hi - lo)) * (H - PAD - 10);
  const dots = Array.from({ length: n }, (_, i) => (Number.isFinite(predicted[i]!) ? `<circle cx="${x(actual[i]!).toFixed(1)}" cy="${y(predicted[i]!).toFixed(1)}" r="2.2" class="dot"/>` : '')).join('');
  return `<svg xmlns="http://www.w3.org/2000/svg" width="${W}" height="${H}" role="img" aria-label="predicted against actual">
<line x1="${PAD}" y1="${H - PAD}" x2="${W - 10}" y2="${H - PAD}" class="axis"/><line x1="${PAD}" y1="10" x2="${PAD}" y2="${H - PAD}" class="axis"/>
<line x1="${x(lo)}" y1="${y(lo)}" x2="${x(hi)}" y2="${y(hi)}" class="diag"/>${dots}
<text x="${PAD}" y="${H - 22}">${num(lo)}</text><text x="${W - 50}" y="${H - 22}">${num(hi)}</text>
<text x="${PAD + 60}" y="${H - 6}">actual ${escapeText(column)}</text><text x="4" y="20">predicted</text>
</svg>`;
}

export function residualHistogramSvg(actual: ArrayLike<number>, predicted: ArrayLike<number>, bins = 20): string {
  const residuals: number[] = [];
  for (let i = 0; i < Math.min(actual.length, predicted.length); i++) if (Number.isFinite(predicted[i]!)) residuals.push(predicted[i]! - actual[i]!);
  const m = Math.max(1e-12, ...residuals.map(Math.abs));
  const counts = new Array<number>(bins).fill(0);
  for (const r of residuals) counts[Math.min(bins - 1, Math.floor(((r + m) / (2 * m)) * bins))]!++;
  const top = Math.max(1, ...counts);
  const bw = (W - PAD - 10) / bins;
  const bars = counts.map((c, k) => `<rect x="${(PAD + k * bw).toFixed(1)}" y="${(H - PAD - (c / top) * (H - PAD - 10)).toFixed(1)}" width="${(bw - 1).toFixed(1)}" height="${((c / top) * (H - PAD - 10)).toFixed(1)}" class="bar"/>`).join('');
  return `<svg xmlns="http://www.w3.org/2000/svg" width="${W}" height="${H}" role="img" aria-label="residual histogram">
<line x1="${PAD}" y1="${H - PAD}" x2="${W - 10}" y2="${H - PAD}" class="axis"/>${bars}
<line x1="${PAD + (W - PAD - 10) / 2}" y1="10" x2="${PAD + (W - PAD - 10) / 2}" y2="${H - PAD}" class="diag"/>
<text x="${PAD}" y="${H - 22}">−${num(m)}</text><text x="${W - 50}" y="${H - 22}">+${num(m)}</text><text x="${PAD + 60}" y="${H - 6}">predicted − actual (${residuals.length} rows; tallest bar ${top})</text>
</svg>`;
}

const escapeText = (s: string) => s.replace(/[&<>"]/g, (ch) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;' })[ch]!);
