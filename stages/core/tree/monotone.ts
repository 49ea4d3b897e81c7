/**
 * Monotone event rates over ordered interval bins by merging adjacent bins that break the trend
 * (pool-adjacent-violators; Barlow, Bartholomew, Bremner & Brunk 1972, "Statistical Inference
 * under Order Restrictions", cited from memory). Equal neighbouring rates are not a violation.
 */
import type { IntervalBins } from './univariate.js';

export type Direction = 'up' | 'down';

export function mergeMonotone(bins: IntervalBins, dir: Direction): IntervalBins {
  const n: number[] = [];
  const ev: number[] = [];
  const upper: number[] = [];
  for (let k = 0; k < bins.n.length; k++) {
    n.push(bins.n[k]);
    ev.push(bins.events[k]);
    upper.push(k < bins.thresholds.length ? bins.thresholds[k] : Infinity);
    while (n.length >= 2 && breaks(ev[ev.length - 2], n[n.length - 2], ev[ev.length - 1], n[n.length - 1], dir)) {
      const nl = n.pop() as number;
      const el = ev.pop() as number;
      const ul = upper.pop() as number;
      n[n.length - 1] += nl;
      ev[ev.length - 1] += el;
      upper[upper.length - 1] = ul;
    }
  }
  upper.pop();
  return { thresholds: upper, n, events: ev };
}

/** Compares rates by cross-multiplication so that equal rates compare equal exactly. */
function breaks(evA: number, nA: number, evB: number, nB: number, dir: Direction): boolean {
  const a = evA * nB;
  const b = evB * nA;
  return dir === 'up' ? a > b : a < b;
}

/**
 * Direction of the rank correlation between x and a binary y, from per-bin counts in ascending
 * x order: the sign of Σ_events rank(x) − n₁(n+1)/2 (the Mann–Whitney statistic centred), which
 * has the sign of Spearman's correlation for a binary y. Ties share their average rank.
 * Returns null when there is no trend.
 */
export function trendDirection(n: ArrayLike<number>, events: ArrayLike<number>): Direction | null {
  let below = 0;
  let rankSum = 0;
  let total = 0;
  let totalEv = 0;
  for (let k = 0; k < n.length; k++) {
    rankSum += events[k] * (below + (n[k] + 1) / 2);
    below += n[k];
    total += n[k];
    totalEv += events[k];
  }
  const centred = rankSum - (totalEv * (total + 1)) / 2;
  if (centred > 0) return 'up';
  if (centred < 0) return 'down';
  return null;
}
