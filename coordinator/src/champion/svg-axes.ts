/**
 * Axes for the report's small SVG charts: tick marks with their values on both axes and a title
 * on each, so a reader can read a value off every chart. Pure.
 */

/** Tick values at a round step (1, 2 or 5 times a power of ten) from `lo` to `hi`, about `count` of them. */
export function niceTicks(lo: number, hi: number, count = 5): number[] {
  if (!(hi > lo) || !Number.isFinite(lo) || !Number.isFinite(hi)) return Number.isFinite(lo) ? [lo] : [];
  const rough = (hi - lo) / Math.max(1, count);
  const power = 10 ** Math.floor(Math.log10(rough));
  const step = [1, 2, 5, 10].map((m) => m * power).find((s) => s >= rough * 0.999)!;
  const ticks: number[] = [];
  // Rounded to the step's own precision, so 0.1 + 0.2 prints as 0.3.
  const digits = Math.max(0, -Math.floor(Math.log10(step)) + 1);
  for (let v = Math.ceil(lo / step - 1e-9) * step; v <= hi + step * 1e-9; v += step) ticks.push(Number(v.toFixed(digits)));
  return ticks;
}

/** A number as a tick label: at most 3 significant digits, no trailing zeros. */
export const tickLabel = (v: number): string => String(Number(v.toPrecision(3)));

export interface Axis {
  lo: number;
  hi: number;
  title: string;
  /** The tick values (default: {@link niceTicks} of the range). */
  ticks?: readonly number[];
  format?: (v: number) => string;
  /** A class for its tick labels and title (to colour them as the line they belong to). */
  className?: string;
}

export interface Frame {
  /** Left, top, right and bottom edges of the plot area inside the SVG. */
  left: number;
  top: number;
  right: number;
  bottom: number;
}

const esc = (s: string) => s.replace(/[&<>"]/g, (ch) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;' })[ch]!);

/** Where a value of `axis` lands between pixel `from` (at lo) and `to` (at hi). */
export const scale = (axis: Axis, from: number, to: number) => (v: number) => from + ((v - axis.lo) / (axis.hi - axis.lo || 1)) * (to - from);

/**
 * The axis lines of `frame`, each axis's ticks with their labels, and the axis titles (x below,
 * y turned along the left edge; an optional second y axis along the right edge). Text carries
 * class `tick` or `axis-title`, so a test or a style sheet can find it.
 */
export function axesSvg(frame: Frame, x: Axis, y: Axis, y2?: Axis): string {
  const { left, top, right, bottom } = frame;
  const fx = scale(x, left, right);
  const out = [`<line x1="${left}" y1="${bottom}" x2="${right}" y2="${bottom}" class="axis"/>`, `<line x1="${left}" y1="${top}" x2="${left}" y2="${bottom}" class="axis"/>`];
  for (const v of x.ticks ?? niceTicks(x.lo, x.hi)) {
    const px = fx(v).toFixed(1);
    out.push(`<line x1="${px}" y1="${bottom}" x2="${px}" y2="${bottom + 4}" class="axis"/><text x="${px}" y="${bottom + 15}" text-anchor="middle" class="tick">${esc((x.format ?? tickLabel)(v))}</text>`);
  }
  const cls = (base: string, axis: Axis) => (axis.className ? `${base} ${axis.className}` : base);
  const vertical = (axis: Axis, at: number, side: 1 | -1) => {
    const fy = scale(axis, bottom, top);
    for (const v of axis.ticks ?? niceTicks(axis.lo, axis.hi)) {
      const py = fy(v).toFixed(1);
      out.push(`<line x1="${at}" y1="${py}" x2="${at + 4 * side}" y2="${py}" class="axis"/><text x="${at + 6 * side}" y="${py}" dy="0.35em" text-anchor="${side < 0 ? 'end' : 'start'}" class="${cls('tick', axis)}">${esc((axis.format ?? tickLabel)(v))}</text>`);
    }
  };
  vertical(y, left, -1);
  out.push(`<text x="${(left + right) / 2}" y="${bottom + 32}" text-anchor="middle" class="axis-title">${esc(x.title)}</text>`);
  out.push(`<text transform="translate(12 ${(top + bottom) / 2}) rotate(-90)" text-anchor="middle" class="${cls('axis-title', y)}">${esc(y.title)}</text>`);
  if (y2) {
    out.push(`<line x1="${right}" y1="${top}" x2="${right}" y2="${bottom}" class="axis"/>`);
    vertical(y2, right, 1);
    out.push(`<text transform="translate(${right + 48} ${(top + bottom) / 2}) rotate(90)" text-anchor="middle" class="${cls('axis-title', y2)}">${esc(y2.title)}</text>`);
  }
  return out.join('\n');
}
