/**
 * The finished tree in flat array form, separate from the training structure: node 0 is the
 * root, a leaf has feature −1. Applying it is a loop over typed arrays with no allocation, on
 * raw values (`x <= threshold` goes left, NaN follows `missingLeft`) or on bin codes.
 */
import type { BinCodes } from './bin.js';
import { TreeParamError } from './errors.js';

export interface FlatTree {
  readonly nNodes: number;
  /** Split column (index into the columns the tree was grown on); −1 for a leaf. */
  readonly feature: Int32Array;
  /** Real-valued threshold: rows with x <= threshold go left; +Infinity = only missing go right. */
  readonly threshold: Float64Array;
  /** The same split on bin codes: code <= thresholdBin goes left. */
  readonly thresholdBin: Int32Array;
  /** The missing code of the split column (its value-bin count). */
  readonly missingBin: Int32Array;
  readonly missingLeft: Uint8Array;
  readonly left: Int32Array;
  readonly right: Int32Array;
  /** Leaf value: event rate (Gini trees) or Newton step −G/(H+λ) (gradient trees); set on every node. */
  readonly value: Float64Array;
  /** Fit rows reaching the node. */
  readonly count: Float64Array;
  /** Gradient sum (weighted events for Gini trees). */
  readonly gradSum: Float64Array;
  /** Hessian sum (weighted rows for Gini trees). */
  readonly hessSum: Float64Array;
  readonly depth: Int32Array;
}

/** What applying a tree to raw values needs: the part of a FlatTree a fitted model stores. */
export type RawTree = Pick<FlatTree, 'feature' | 'threshold' | 'missingLeft' | 'left' | 'right' | 'value'>;

/** Plain-JSON form of a FlatTree; an infinite threshold is written as null. */
export interface FlatTreeJson {
  readonly feature: number[];
  readonly threshold: (number | null)[];
  readonly thresholdBin: number[];
  readonly missingBin: number[];
  readonly missingLeft: number[];
  readonly left: number[];
  readonly right: number[];
  readonly value: number[];
  readonly count: number[];
  readonly gradSum: number[];
  readonly hessSum: number[];
  readonly depth: number[];
}

export function treeToJson(t: FlatTree): FlatTreeJson {
  return {
    feature: Array.from(t.feature),
    threshold: Array.from(t.threshold, (v) => (Number.isFinite(v) ? v : null)),
    thresholdBin: Array.from(t.thresholdBin),
    missingBin: Array.from(t.missingBin),
    missingLeft: Array.from(t.missingLeft),
    left: Array.from(t.left),
    right: Array.from(t.right),
    value: Array.from(t.value),
    count: Array.from(t.count),
    gradSum: Array.from(t.gradSum),
    hessSum: Array.from(t.hessSum),
    depth: Array.from(t.depth),
  };
}

export function treeFromJson(j: FlatTreeJson): FlatTree {
  const n = j.feature.length;
  for (const [k, v] of Object.entries(j)) {
    if (!Array.isArray(v) || v.length !== n) throw new TreeParamError('tree arrays must all have the node count', k, n);
  }
  return {
    nNodes: n,
    feature: Int32Array.from(j.feature),
    threshold: Float64Array.from(j.threshold, (v) => (v === null ? Infinity : v)),
    thresholdBin: Int32Array.from(j.thresholdBin),
    missingBin: Int32Array.from(j.missingBin),
    missingLeft: Uint8Array.from(j.missingLeft),
    left: Int32Array.from(j.left),
    right: Int32Array.from(j.right),
    value: Float64Array.from(j.value),
    count: Float64Array.from(j.count),
    gradSum: Float64Array.from(j.gradSum),
    hessSum: Float64Array.from(j.hessSum),
    depth: Int32Array.from(j.depth),
  };
}

/** The leaf row `r` of `columns` (indexed like the tree's features) reaches; missing values take the learned side. */
function rawLeaf(t: RawTree, columns: readonly Float64Array[], r: number): number {
  const feature = t.feature;
  let node = 0;
  let f = feature[0];
  while (f >= 0) {
    const x = columns[f][r];
    const goLeft = x !== x ? t.missingLeft[node] === 1 : x <= t.threshold[node];
    node = goLeft ? t.left[node] : t.right[node];
    f = feature[node];
  }
  return node;
}

/** Leaf reached by each row: out[i] for values at rows[i] of `columns` (indexed like the tree's features). */
export function leafIndexRaw(t: RawTree, columns: readonly Float64Array[], rows: Uint32Array, out: Int32Array): void {
  for (let i = 0; i < rows.length; i++) out[i] = rawLeaf(t, columns, rows[i]);
}

/** Leaf reached by local rows 0..n-1 given their bin codes per column. */
export function leafIndexBinned(t: FlatTree, codes: readonly BinCodes[], n: number, out: Int32Array): void {
  const feature = t.feature;
  const tb = t.thresholdBin;
  const mb = t.missingBin;
  const missingLeft = t.missingLeft;
  const left = t.left;
  const right = t.right;
  for (let r = 0; r < n; r++) {
    let node = 0;
    let f = feature[0];
    while (f >= 0) {
      const code = codes[f][r];
      const goLeft = code === mb[node] ? missingLeft[node] === 1 : code <= tb[node];
      node = goLeft ? left[node] : right[node];
      f = feature[node];
    }
    out[r] = node;
  }
}

/** Leaf value for each of `rows` on raw values. */
export function predictRaw(t: RawTree, columns: readonly Float64Array[], rows: Uint32Array, out: Float64Array): void {
  const value = t.value;
  for (let i = 0; i < rows.length; i++) out[i] = value[rawLeaf(t, columns, rows[i])];
}

/**
 * Adds the leaf value reached by each local row rows[i] (given its bin codes) to acc[rows[i]].
 * Boosting keeps running margins and adds only the newest tree, so no row is ever re-run
 * through the earlier trees.
 */
export function addLeafValuesBinned(t: FlatTree, codes: readonly BinCodes[], rows: Uint32Array, acc: Float64Array): void {
  const feature = t.feature;
  const tb = t.thresholdBin;
  const mb = t.missingBin;
  const missingLeft = t.missingLeft;
  const left = t.left;
  const right = t.right;
  const value = t.value;
  for (let i = 0; i < rows.length; i++) {
    const r = rows[i];
    let node = 0;
    let f = feature[0];
    while (f >= 0) {
      const code = codes[f][r];
      const goLeft = code === mb[node] ? missingLeft[node] === 1 : code <= tb[node];
      node = goLeft ? left[node] : right[node];
      f = feature[node];
    }
    acc[r] += value[node];
  }
}
