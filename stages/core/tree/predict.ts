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

/** Rows scored together by `addTreeValuesRaw`: 256 rows × 100 columns of gathered values is 200 KB. */
const SCORE_BLOCK = 256;

/**
 * acc[i] += the leaf value of every tree in `trees`, in order, for row rows[i] on raw values.
 *
 * Rows go in blocks; a block's values of the columns the trees split on are first gathered
 * row-major into a small buffer, so walking hundreds of trees reads a cache-resident buffer
 * instead of scattered entries of full-length columns. Each walk takes exactly the tree's depth
 * in steps (leaves point to themselves) and picks the child by index arithmetic, not a branch:
 * which way a row goes is a coin flip to the CPU, and mispredicted branches were most of the
 * cost of the plain walk. Each row adds its trees' values in tree order, so acc does not depend
 * on the block size, and every row reaches the leaf `leafIndexRaw` finds.
 */
export function addTreeValuesRaw(trees: readonly RawTree[], columns: readonly Float64Array[], rows: Uint32Array, acc: Float64Array): void {
  // slot[f]: column f's position in a gathered row, −1 when no tree splits on it
  const slot = new Int32Array(columns.length).fill(-1);
  const used: number[] = [];
  for (const t of trees) {
    for (let k = 0; k < t.feature.length; k++) {
      const f = t.feature[k];
      if (f >= 0 && slot[f] < 0) {
        if (f >= columns.length) throw new TreeParamError('tree splits on a column that is not given', 'feature', f);
        slot[f] = used.length;
        used.push(f);
      }
    }
  }
  const width = used.length;
  const walks = trees.map((t) => fixedDepthWalk(t, slot));
  const block = new Float64Array(SCORE_BLOCK * Math.max(1, width));
  for (let b = 0; b < rows.length; b += SCORE_BLOCK) {
    const m = Math.min(SCORE_BLOCK, rows.length - b);
    for (let k = 0; k < width; k++) {
      const x = columns[used[k]];
      for (let i = 0; i < m; i++) block[i * width + k] = x[rows[b + i]];
    }
    for (let j = 0; j < walks.length; j++) {
      const { depth, slotOf, threshold, missingLeft, child, value } = walks[j];
      let i = 0;
      // four rows at a time: their walks are independent chains of dependent loads, which the
      // CPU can overlap only when they sit in one loop body
      for (; i + 4 <= m; i += 4) {
        const a0 = i * width;
        const a1 = a0 + width;
        const a2 = a1 + width;
        const a3 = a2 + width;
        let n0 = 0;
        let n1 = 0;
        let n2 = 0;
        let n3 = 0;
        for (let d = 0; d < depth; d++) {
          const x0 = block[a0 + slotOf[n0]];
          const x1 = block[a1 + slotOf[n1]];
          const x2 = block[a2 + slotOf[n2]];
          const x3 = block[a3 + slotOf[n3]];
          // x <= t goes left; NaN (x !== x) goes left exactly when missingLeft
          n0 = child[2 * n0 + 1 - (+(x0 <= threshold[n0]) | (+(x0 !== x0) & missingLeft[n0]))];
          n1 = child[2 * n1 + 1 - (+(x1 <= threshold[n1]) | (+(x1 !== x1) & missingLeft[n1]))];
          n2 = child[2 * n2 + 1 - (+(x2 <= threshold[n2]) | (+(x2 !== x2) & missingLeft[n2]))];
          n3 = child[2 * n3 + 1 - (+(x3 <= threshold[n3]) | (+(x3 !== x3) & missingLeft[n3]))];
        }
        acc[b + i] += value[n0];
        acc[b + i + 1] += value[n1];
        acc[b + i + 2] += value[n2];
        acc[b + i + 3] += value[n3];
      }
      for (; i < m; i++) {
        const at = i * width;
        let node = 0;
        for (let d = 0; d < depth; d++) {
          const x = block[at + slotOf[node]];
          node = child[2 * node + 1 - (+(x <= threshold[node]) | (+(x !== x) & missingLeft[node]))];
        }
        acc[b + i] += value[node];
      }
    }
  }
}

interface FixedDepthWalk {
  /** Longest root-to-leaf path. */
  readonly depth: number;
  /** Gathered-row position of each node's split column (0 for a leaf, whose children are itself). */
  readonly slotOf: Int32Array;
  readonly threshold: Float64Array;
  readonly missingLeft: Uint8Array;
  /** child[2k] = left, child[2k + 1] = right; a leaf's are both itself. */
  readonly child: Int32Array;
  readonly value: Float64Array;
}

function fixedDepthWalk(t: RawTree, slot: Int32Array): FixedDepthWalk {
  const n = t.feature.length;
  const slotOf = new Int32Array(n);
  const child = new Int32Array(2 * n);
  const level = new Int32Array(n);
  let depth = 0;
  for (let k = 0; k < n; k++) {
    const f = t.feature[k];
    if (f < 0) {
      child[2 * k] = k;
      child[2 * k + 1] = k;
      continue;
    }
    slotOf[k] = slot[f];
    child[2 * k] = t.left[k];
    child[2 * k + 1] = t.right[k];
  }
  // children have higher indices than their parent in every tree the core grows; a depth pass in
  // index order relies on that, so check it rather than loop forever on a malformed tree
  for (let k = 0; k < n; k++) {
    if (t.feature[k] < 0) continue;
    for (const c of [t.left[k], t.right[k]]) {
      if (!(c > k && c < n)) throw new TreeParamError('a child must come after its parent', 'child', c);
      level[c] = level[k] + 1;
      if (level[c] > depth) depth = level[c];
    }
  }
  return { depth, slotOf, threshold: t.threshold, missingLeft: t.missingLeft, child, value: t.value };
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
