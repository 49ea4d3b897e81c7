/**
 * A one-column Gini tree turned into ordered intervals: the building block of tree binning.
 * Because the tree sees a single column, every node's rows form one interval (lower, upper] of
 * that column, and its leaves read left to right are adjacent intervals. So the tree is grown on
 * per-bin row and event counts as prefix sums — no per-node histograms, no row partitioning.
 *
 * Bins are the column's quantile bins (at most `maxBins`, edges from a sample of the fit rows).
 * When the sample holds every distinct value and there are at most `maxBins` of them — always
 * so for up to SAMPLE_ROWS (bin.ts) fit rows with few enough distinct values — each bin is one
 * value and the tree is exactly the one grown on the raw values. A threshold sits at the
 * midpoint between the largest fit value left of it and the smallest right of it, as
 * scikit-learn and rpart place theirs, so it always falls in a real gap of the fit data.
 *
 * The split rules are those of `split.ts` for the Gini criterion (same gain arithmetic on the same
 * integer sums, a strictly positive gain, the lowest threshold on ties, a minimum row count per
 * child, no split of a pure node).
 */
import { binOf, edgeGrid, edgeSample, midpoint, quantileEdges } from './bin.js';
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
  /** Most bins the column is cut into before growing (2..65535). */
  readonly maxBins: number;
}

/** Weight-times-Gini impurity 2·e·(n−e)/n, as in split.ts. */
function giniMass(e: number, n: number): number {
  return n > 0 ? (2 * e * (n - e)) / n : 0;
}

/**
 * Fits a Gini tree on x; rows with a missing x must already be left out of `rows`. `sampleFrom`
 * holds every row the edge sample of these rows can pick (bin.edgeSampleRows of a superset): a
 * caller fitting many columns over one row set hashes its rows once, not once per column.
 */
export function fitIntervalTree(x: Float64Array, y: Uint8Array, rows: Uint32Array, p: UnivariateTreeParams, sampleFrom: Uint32Array = rows): IntervalTree {
  const n = rows.length;
  if (n === 0) return { bins: { thresholds: [], n: [0], events: [0] }, trend: null };
  const edges = Float64Array.from(quantileEdges(edgeSample(x, sampleFrom, n), p.maxBins));
  const nb = edges.length + 1;
  const binN = new Float64Array(nb);
  const binE = new Float64Array(nb);
  const lowest = new Float64Array(nb).fill(Infinity);
  const highest = new Float64Array(nb).fill(-Infinity);
  const grid = edgeGrid(edges);
  for (let i = 0; i < n; i++) {
    const r = rows[i];
    const v = x[r];
    const b = binOf(grid, edges, v);
    binN[b]++;
    binE[b] += y[r];
    if (v < lowest[b]) lowest[b] = v;
    if (v > highest[b]) highest[b] = v;
  }
  // Prefix sums over the bins; every bin holds at least its sampled value, so none is empty.
  const cumN = new Float64Array(nb + 1);
  const cumE = new Float64Array(nb + 1);
  for (let k = 0; k < nb; k++) {
    cumN[k + 1] = cumN[k] + binN[k];
    cumE[k + 1] = cumE[k] + binE[k];
  }
  const d = nb;
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
    out.thresholds.push(midpoint(highest[bestK], lowest[bestK + 1]));
    grow(bestK + 1, hi, depth + 1);
  };
  grow(0, d, 0);
  return { bins: out, trend: trendDirection(binN, binE) };
}
