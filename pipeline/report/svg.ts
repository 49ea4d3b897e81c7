/**
 * A small line-chart drawer for inline SVG: axes with ticks, polylines, reference lines and
 * marked points. Curves with thousands of operating points are thinned to what a screen or a
 * printer can show (points closer than MIN_STEP px to the last drawn one are skipped), which
 * keeps the page small without changing the shape.
 */
import { coord, escapeHtml } from './format.js';

export interface Axis {
  readonly label: string;
  readonly min: number;
  readonly max: number;
  readonly ticks: readonly number[];
  readonly tickText: (v: number) => string;
}

export interface Series {
  readonly name: string;
  readonly color: string;
  readonly xs: ArrayLike<number>;
  readonly ys: ArrayLike<number>;
  /** Heavier line for the series the chart is about. */
  readonly emphasis?: boolean;
  /** Draw a dot at every point (for binned data such as calibration). */
  readonly dots?: boolean;
}

export interface Guide {
  /** A straight reference line in data coordinates, e.g. the chance diagonal or the budget. */
  readonly from: readonly [number, number];
  readonly to: readonly [number, number];
  readonly label?: string;
}

export interface Mark {
  readonly x: number;
  readonly y: number;
  readonly label: string;
}

export interface ChartSpec {
  readonly title: string;
  readonly x: Axis;
  readonly y: Axis;
  readonly series: readonly Series[];
  readonly guides?: readonly Guide[];
  readonly marks?: readonly Mark[];
}

const WIDTH = 400;
const HEIGHT = 340;
const LEFT = 52;
const RIGHT = 14;
const TOP = 12;
const BOTTOM = 46;
const MIN_STEP = 0.6;

export function lineChart(spec: ChartSpec): string {
  const w = WIDTH - LEFT - RIGHT;
  const h = HEIGHT - TOP - BOTTOM;
  const sx = (v: number) => LEFT + ((clamp(v, spec.x.min, spec.x.max) - spec.x.min) / (spec.x.max - spec.x.min)) * w;
  const sy = (v: number) => TOP + h - ((clamp(v, spec.y.min, spec.y.max) - spec.y.min) / (spec.y.max - spec.y.min)) * h;
  const parts: string[] = [];
  parts.push(`<svg viewBox="0 0 ${WIDTH} ${HEIGHT}" role="img" aria-label="${escapeHtml(spec.title)}" class="chart">`);
  parts.push(`<title>${escapeHtml(spec.title)}</title>`);
  parts.push(`<rect x="${LEFT}" y="${TOP}" width="${w}" height="${h}" class="plot-bg"/>`);
  for (const t of spec.x.ticks) {
    const x = coord(sx(t));
    parts.push(`<line x1="${x}" y1="${TOP}" x2="${x}" y2="${TOP + h}" class="grid"/>`);
    parts.push(`<text x="${x}" y="${TOP + h + 16}" class="tick" text-anchor="middle">${escapeHtml(spec.x.tickText(t))}</text>`);
  }
  for (const t of spec.y.ticks) {
    const y = coord(sy(t));
    parts.push(`<line x1="${LEFT}" y1="${y}" x2="${LEFT + w}" y2="${y}" class="grid"/>`);
    parts.push(`<text x="${LEFT - 6}" y="${y}" class="tick" text-anchor="end" dominant-baseline="middle">${escapeHtml(spec.y.tickText(t))}</text>`);
  }
  parts.push(`<rect x="${LEFT}" y="${TOP}" width="${w}" height="${h}" class="frame"/>`);
  parts.push(`<text x="${LEFT + w / 2}" y="${HEIGHT - 8}" class="axis-label" text-anchor="middle">${escapeHtml(spec.x.label)}</text>`);
  parts.push(`<text x="14" y="${TOP + h / 2}" class="axis-label" text-anchor="middle" transform="rotate(-90 14 ${TOP + h / 2})">${escapeHtml(spec.y.label)}</text>`);
  for (const g of spec.guides ?? []) {
    parts.push(`<line x1="${coord(sx(g.from[0]))}" y1="${coord(sy(g.from[1]))}" x2="${coord(sx(g.to[0]))}" y2="${coord(sy(g.to[1]))}" class="guide"/>`);
    if (g.label) parts.push(`<text x="${coord(sx(g.to[0]) + 4)}" y="${coord(sy(g.to[1]) + 12)}" class="guide-label">${escapeHtml(g.label)}</text>`);
  }
  // Emphasised series last, so it is drawn on top.
  const ordered = [...spec.series.filter((s) => !s.emphasis), ...spec.series.filter((s) => s.emphasis)];
  for (const s of ordered) {
    const pts = thin(s.xs, s.ys, sx, sy);
    if (pts.length === 0) continue;
    parts.push(`<polyline points="${pts}" fill="none" stroke="${s.color}" stroke-width="${s.emphasis ? 2.4 : 1.4}" stroke-linejoin="round"><title>${escapeHtml(s.name)}</title></polyline>`);
    if (s.dots) {
      for (let i = 0; i < s.xs.length; i++) parts.push(`<circle cx="${coord(sx(s.xs[i]))}" cy="${coord(sy(s.ys[i]))}" r="3.2" fill="${s.color}"/>`);
    }
  }
  for (const m of spec.marks ?? []) {
    const x = sx(m.x);
    const y = sy(m.y);
    const right = x < LEFT + w * 0.6;
    parts.push(`<circle cx="${coord(x)}" cy="${coord(y)}" r="4.5" class="mark"/>`);
    parts.push(`<text x="${coord(right ? x + 8 : x - 8)}" y="${coord(y + 16)}" class="mark-label" text-anchor="${right ? 'start' : 'end'}">${escapeHtml(m.label)}</text>`);
  }
  parts.push('</svg>');
  return parts.join('');
}

/** Evenly spaced ticks from min to max inclusive. */
export function ticks(min: number, max: number, step: number): number[] {
  const out: number[] = [];
  const n = Math.round((max - min) / step);
  for (let i = 0; i <= n; i++) out.push(min + i * step);
  return out;
}

function clamp(v: number, lo: number, hi: number): number {
  return v < lo ? lo : v > hi ? hi : v;
}

/** "x,y x,y …" in pixels, skipping points within MIN_STEP of the last drawn one; the last point is always drawn. */
function thin(xs: ArrayLike<number>, ys: ArrayLike<number>, sx: (v: number) => number, sy: (v: number) => number): string {
  const out: string[] = [];
  let lx = NaN;
  let ly = NaN;
  const n = Math.min(xs.length, ys.length);
  for (let i = 0; i < n; i++) {
    if (!Number.isFinite(xs[i]) || !Number.isFinite(ys[i])) continue;
    const x = sx(xs[i]);
    const y = sy(ys[i]);
    if (i < n - 1 && Math.abs(x - lx) < MIN_STEP && Math.abs(y - ly) < MIN_STEP) continue;
    out.push(`${coord(x)},${coord(y)}`);
    lx = x;
    ly = y;
  }
  return out.join(' ');
}
