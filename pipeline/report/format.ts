/**
 * How the report writes numbers and text. One set of rules for every table and chart, and no
 * locale lookups (`toLocaleString` depends on the ICU data of the machine), so the same run
 * folder gives the same bytes everywhere.
 */

/** Text from data or config goes into HTML and SVG only through here. */
export function escapeHtml(text: string): string {
  return text.replace(/[&<>"']/g, (c) => ENTITIES[c]);
}

const ENTITIES: Readonly<Record<string, string>> = { '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' };

/** Shown for a metric that is undefined for the data (null in metrics.json). */
export const NOT_AVAILABLE = '–';

type Maybe = number | null | undefined;

function present(x: Maybe): x is number {
  return typeof x === 'number' && Number.isFinite(x);
}

/** Fixed decimals; a metric that is null or not finite prints as a dash. */
export function fixed(x: Maybe, digits: number): string {
  return present(x) ? x.toFixed(digits) : NOT_AVAILABLE;
}

/** A fraction as a percentage, e.g. 0.0824 → "8.2%". */
export function percent(x: Maybe, digits = 1): string {
  return present(x) ? `${(100 * x).toFixed(digits)}%` : NOT_AVAILABLE;
}

/** Whole numbers with thin-space-free comma grouping: 20000 → "20,000". */
export function count(x: Maybe): string {
  if (!present(x)) return NOT_AVAILABLE;
  const sign = x < 0 ? '-' : '';
  const digits = String(Math.round(Math.abs(x)));
  return sign + digits.replace(/\B(?=(\d{3})+(?!\d))/g, ',');
}

/** A 95% interval as "[low, high]". */
export function interval(ci: readonly [number, number] | null | undefined, digits: number): string {
  return ci ? `[${fixed(ci[0], digits)}, ${fixed(ci[1], digits)}]` : NOT_AVAILABLE;
}

/** Seconds with a resolution that suits stage timings. */
export function seconds(x: Maybe): string {
  return present(x) ? `${x.toFixed(2)} s` : NOT_AVAILABLE;
}

/** SVG coordinates: two decimals are sub-pixel at any sensible zoom and keep the file small. */
export function coord(x: number): string {
  return String(Math.round(x * 100) / 100);
}

/** The first 12 hex digits of a digest: enough to tell runs apart by eye. */
export function shortDigest(d: string | undefined): string {
  return typeof d === 'string' && d.length > 0 ? d.slice(0, 12) : NOT_AVAILABLE;
}
