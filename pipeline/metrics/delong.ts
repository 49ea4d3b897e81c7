/**
 * Uncertainty of an AUC and comparison of two AUCs on the same rows, by DeLong, DeLong &
 * Clarke-Pearson (1988), Biometrics 44(3), 837-845, with the placement values computed by the
 * midrank method of Sun & Xu (2014), IEEE Signal Processing Letters 21(11), 1389-1393: sorting,
 * O(n log n), instead of the O(m n) pairwise kernel. Conventions (sample variances, CI clipped
 * to [0, 1], p = 2 Phi(-|z|)) are those of R pROC 1.18.0, oracle delong_auc.json.
 */
import { MetricInputError, checkScores } from './input.js';
import { erfc, normalQuantile } from './normal.js';

export interface Placements {
  /** Per event, in row order: share of non-events it outranks (ties 1/2). Their mean is the AUC. */
  readonly v10: Float64Array;
  /** Per non-event, in row order: share of events that outrank it (ties 1/2). */
  readonly v01: Float64Array;
  readonly auc: number;
}

/**
 * Sun & Xu's V10_i = (Tz_i - Tx_i)/n and V01_j = 1 - (Tz_j - Ty_j)/m with midranks T over all
 * rows (z), events (x) and non-events (y). The midrank difference Tz - Tx of an event is the
 * number of non-events below it plus half of those tied with it (and symmetrically for a
 * non-event), so each class is sorted once (native typed-array sort) and every row reads its two
 * counts by binary search; placements come back in row order.
 */
export function delongPlacements(y: Uint8Array, p: Float64Array): Placements {
  const m = checkScores('delong', y, p);
  const n = y.length - m;
  if (m === 0 || n === 0) throw new MetricInputError('needs both events and non-events', 'delong', { events: m, nonEvents: n });
  const cases = new Float64Array(m);
  const controls = new Float64Array(n);
  for (let i = 0, a = 0, b = 0; i < y.length; i++) {
    if (y[i] === 1) cases[a++] = p[i];
    else controls[b++] = p[i];
  }
  cases.sort();
  controls.sort();
  const v10 = new Float64Array(m);
  const v01 = new Float64Array(n);
  for (let i = 0, a = 0, b = 0; i < y.length; i++) {
    const v = p[i];
    if (y[i] === 1) {
      const below = lowerBound(controls, v);
      v10[a++] = (below + (upperBound(controls, v) - below) / 2) / n;
    } else {
      const atOrBelow = upperBound(cases, v);
      v01[b++] = (m - atOrBelow + (atOrBelow - lowerBound(cases, v)) / 2) / m;
    }
  }
  return { v10, v01, auc: mean(v10) };
}

/** Number of entries of ascending `s` strictly below v. */
function lowerBound(s: Float64Array, v: number): number {
  let lo = 0;
  let hi = s.length;
  while (lo < hi) {
    const mid = (lo + hi) >>> 1;
    if (s[mid] < v) lo = mid + 1;
    else hi = mid;
  }
  return lo;
}

/** Number of entries of ascending `s` at or below v. */
function upperBound(s: Float64Array, v: number): number {
  let lo = 0;
  let hi = s.length;
  while (lo < hi) {
    const mid = (lo + hi) >>> 1;
    if (s[mid] <= v) lo = mid + 1;
    else hi = mid;
  }
  return lo;
}

export interface DelongAuc {
  readonly auc: number;
  readonly variance: number;
  readonly se: number;
  /** Normal interval on the AUC scale, clipped to [0, 1] as pROC does. */
  readonly ci: readonly [number, number];
  readonly level: number;
  readonly nEvents: number;
  readonly nNonEvents: number;
}

/** Throws MetricInputError with fewer than 2 events or 2 non-events (sample variance undefined). */
export function delongAuc(y: Uint8Array, p: Float64Array, level = 0.95): DelongAuc {
  const pl = delongPlacements(y, p);
  const m = pl.v10.length;
  const n = pl.v01.length;
  needTwo(m, n);
  const variance = covariance(pl.v10, pl.v10) / m + covariance(pl.v01, pl.v01) / n;
  const se = Math.sqrt(variance);
  const z = normalQuantile(1 - (1 - level) / 2);
  return {
    auc: pl.auc,
    variance,
    se,
    ci: [Math.max(0, pl.auc - z * se), Math.min(1, pl.auc + z * se)],
    level,
    nEvents: m,
    nNonEvents: n,
  };
}

export interface DelongTest {
  readonly auc1: number;
  readonly auc2: number;
  /** auc1 - auc2. */
  readonly diff: number;
  readonly var1: number;
  readonly var2: number;
  readonly cov: number;
  readonly seDiff: number;
  readonly z: number;
  /** Two-sided p = 2 Phi(-|z|) = erfc(|z| / sqrt 2). */
  readonly p: number;
  /** Normal interval of the difference (not clipped). */
  readonly ci: readonly [number, number];
  readonly level: number;
}

/**
 * Paired test of two correlated AUCs (two score vectors on the same rows). Throws
 * MetricInputError when the variance of the difference is zero (e.g. identical rankings).
 */
export function delongTest(y: Uint8Array, p1: Float64Array, p2: Float64Array, level = 0.95): DelongTest {
  const a = delongPlacements(y, p1);
  const b = delongPlacements(y, p2);
  const m = a.v10.length;
  const n = a.v01.length;
  needTwo(m, n);
  const var1 = covariance(a.v10, a.v10) / m + covariance(a.v01, a.v01) / n;
  const var2 = covariance(b.v10, b.v10) / m + covariance(b.v01, b.v01) / n;
  const cov = covariance(a.v10, b.v10) / m + covariance(a.v01, b.v01) / n;
  const varDiff = var1 + var2 - 2 * cov;
  if (!(varDiff > 0)) throw new MetricInputError('variance of the AUC difference is zero', 'delongTest', { varDiff });
  const seDiff = Math.sqrt(varDiff);
  const diff = a.auc - b.auc;
  const z = diff / seDiff;
  const q = normalQuantile(1 - (1 - level) / 2);
  return {
    auc1: a.auc,
    auc2: b.auc,
    diff,
    var1,
    var2,
    cov,
    seDiff,
    z,
    p: erfc(Math.abs(z) / Math.SQRT2),
    ci: [diff - q * seDiff, diff + q * seDiff],
    level,
  };
}

function needTwo(m: number, n: number): void {
  if (m < 2 || n < 2) throw new MetricInputError('needs at least 2 events and 2 non-events', 'delong', { events: m, nonEvents: n });
}

function mean(v: Float64Array): number {
  let s = 0;
  for (let i = 0; i < v.length; i++) s += v[i];
  return s / v.length;
}

/** Sample covariance (divisor length - 1), two-pass for accuracy. */
function covariance(u: Float64Array, v: Float64Array): number {
  const mu = mean(u);
  const mv = mean(v);
  let s = 0;
  for (let i = 0; i < u.length; i++) s += (u[i] - mu) * (v[i] - mv);
  return s / (u.length - 1);
}
