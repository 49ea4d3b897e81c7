/**
 * A one-column Gini tree turned into ordered intervals: the building block of tree binning.
 * Because the tree sees a single column, its leaves read left to right are adjacent intervals
 * (lower, upper] of that column, and every node's rows form one such interval.
 */
import { allocCodes, binThresholds, encodeNumeric, fitNumericBins, MAX_UINT16_BINS, valueBinCount } from './bin.js';
import { growTree } from './grow.js';
import { trendDirection, type Direction } from './monotone.js';
import type { FlatTree } from './predict.js';

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

/**
 * Fits a Gini tree on x (rows with a missing x must already be left out of `rows`). Values are
 * binned exactly (one bin per distinct value) up to 65,535 distinct values, so the thresholds are
 * the midpoints a tree on the raw values would choose; beyond that, quantile bins (and the
 * trend is then measured on those bins, ties within a bin sharing their rank).
 */
export function fitIntervalTree(x: Float64Array, y: Uint8Array, rows: Uint32Array, p: UnivariateTreeParams): IntervalTree {
  const n = rows.length;
  if (n === 0) return { bins: { thresholds: [], n: [0], events: [0] }, trend: null };
  const mapper = fitNumericBins(x, rows, MAX_UINT16_BINS);
  const nb = valueBinCount(mapper);
  const codes = allocCodes(n, nb);
  encodeNumeric(mapper, x, rows, codes);
  const grad = new Float64Array(n);
  const hess = new Float64Array(n).fill(1);
  const perBinN = new Float64Array(nb);
  const perBinEv = new Float64Array(nb);
  for (let i = 0; i < n; i++) {
    grad[i] = y[rows[i]];
    perBinN[codes[i]]++;
    perBinEv[codes[i]] += grad[i];
  }
  const tree = growTree(
    {
      codes: [codes],
      nBins: Int32Array.of(nb),
      thresholds: [binThresholds(mapper)],
      grad,
      hess,
      rows: Uint32Array.from({ length: n }, (_, i) => i),
    },
    {
      maxDepth: p.maxDepth,
      minSplit: 2,
      split: { criterion: 'gini', minLeafCount: p.minLeafCount, minLeafHess: 0, minGain: 0, lambda: 0 },
      leafValue: 'ratio',
    },
  );
  return { bins: leavesInOrder(tree), trend: trendDirection(perBinN, perBinEv) };
}

/** In-order walk: leaves left to right, with the split thresholds between them. */
export function leavesInOrder(tree: FlatTree): IntervalBins {
  const out: IntervalBins = { thresholds: [], n: [], events: [] };
  const stack: number[] = [0];
  const visited = new Uint8Array(tree.nNodes);
  while (stack.length > 0) {
    const node = stack[stack.length - 1];
    if (tree.feature[node] < 0) {
      stack.pop();
      out.n.push(tree.count[node]);
      out.events.push(tree.gradSum[node]);
    } else if (!visited[node]) {
      visited[node] = 1;
      stack.push(tree.left[node]);
    } else {
      stack.pop();
      out.thresholds.push(tree.threshold[node]);
      stack.push(tree.right[node]);
    }
  }
  return out;
}
