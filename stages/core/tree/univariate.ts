/**
 * A one-column Gini tree turned into ordered intervals: the building block of tree binning.
 * Because the tree sees a single column, every node's rows form one interval (lower, upper] of
 * that column, and its leaves read left to right are adjacent intervals. That lets the tree be
 * grown on the sorted distinct values directly — two native sorts and prefix sums, no
 * histograms — with every threshold exactly where a tree on the raw values puts it (the midpoint
 * between neighbouring distinct values, as scikit-learn and rpart do).
 *
 * The split rules are those of `split.ts` for the Gini criterion (same gain arithmetic on the same
 * integer sums, a strictly positive gain, the lowest threshold on ties, a minimum row count per
 * child, no split of a pure node), so the result is the tree `growTree` grows on exact bins.
 */
import { midpoint } from './bin.js';
import { trendDirection, type Direction } from './monotone.js';

export interface IntervalBins {
  /** Ascending cut points; bin k holds (thresholds[k−1], thresholds[k]]. */
  readonly thresholds: number[];
  /** Rows per bin. */
  readonly n: number[];
  /** Events per bin. */
  readonly events: number[];
}

export interface IntervalTree {
  readonly bins: IntervalBins;
  /** Direction of the rank correlation of x with y over the fit rows (null: none). */
  readonly trend: Direction | null;
}

export interface UnivariateTreeParams {
  readonly maxDepth: number;
  /** Minimum rows per leaf, as a count. */
  readonly minLeafCount: number;
}

/** Weight-times-Gini impurity 2·e·(n−e)/n, as in split.ts. */
function giniMass(e: number, n: number): number {
  return n > 0 ? (2 * e * (n - e)) / n : 0;
}

/** Fits a Gini tree on x; rows with a missing x must already be left out of `rows`. */
export function fitIntervalTree(x: Float64Array, y: Uint8Array, rows: Uint32Array, p: UnivariateTreeParams): IntervalTree {
  const n = rows.length;
  if (n === 0) return { bins: { thresholds: [], n: [0], events: [0] }, trend: null };
  let nEv = 0;
  for (let i = 0; i < n; i++) nEv += y[rows[i]];
  const all = new Float64Array(n);
  const ev = new Float64Array(nEv);
  for (let i = 0, k = 0; i < n; i++) {
    const v = x[rows[i]];
    all[i] = v;
    if (y[rows[i]] === 1) ev[k++] = v;
  }
  all.sort();
  ev.sort();
  // Distinct values with their row and event counts, as prefix sums over the sorted values.
  const values = new Float64Array(n);
  const cumN = new Float64Array(n + 1);
  const cumE = new Float64Array(n + 1);
  let d = 0;
  for (let i = 0, j = 0; i < n; d++) {
    const v = all[i];
    let c = 0;
    while (i < n && all[i] === v) {
      c++;
      i++;
    }
    let e = 0;
    while (j < nEv && ev[j] === v) {
      e++;
      j++;
    }
    values[d] = v;
    cumN[d + 1] = cumN[d] + c;
    cumE[d + 1] = cumE[d] + e;
  }
  const out: { thresholds: number[]; n: number[]; events: number[] } = { thresholds: [], n: [], events: [] };
  const minN = p.minLeafCount;
  const grow = (lo: number, hi: number, depth: number): void => {
    const N = cumN[hi] - cumN[lo];
    const E = cumE[hi] - cumE[lo];
    let bestK = -1;
    if (depth < p.maxDepth && N >= 2 && E > 0 && E < N) {
      const parent = -giniMass(E, N);
      let best = 0;
      for (let k = lo; k < hi - 1; k++) {
        const ln = cumN[k + 1] - cumN[lo];
        const rn = N - ln;
        if (ln < minN) continue;
        if (rn < minN) break;
        const le = cumE[k + 1] - cumE[lo];
        const gain = -giniMass(le, ln) + -giniMass(E - le, rn) - parent;
        if (gain > best) {
          best = gain;
          bestK = k;
        }
      }
    }
    if (bestK < 0) {
      out.n.push(N);
      out.events.push(E);
      return;
    }
    grow(lo, bestK + 1, depth + 1);
    out.thresholds.push(midpoint(values[bestK], values[bestK + 1]));
    grow(bestK + 1, hi, depth + 1);
  };
  grow(0, d, 0);
  const perN = new Float64Array(d);
  const perE = new Float64Array(d);
  for (let k = 0; k < d; k++) {
    perN[k] = cumN[k + 1] - cumN[k];
    perE[k] = cumE[k + 1] - cumE[k];
  }
  return { bins: out, trend: trendDirection(perN, perE) };
}
