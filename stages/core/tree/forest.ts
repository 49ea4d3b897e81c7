/**
 * Bagged Gini trees with per-split column sampling (Breiman 2001, "Random Forests", Machine
 * Learning 45; cited from memory), grown by the shared tree core. Shared by the `forest` learner
 * and the `select` and `forest-leaves` stages.
 *
 * The columns are binned once per fit (uint8 codes) and every tree reuses them. A bootstrap is
 * passed to the grower as integer weights — grad = count·y, hess = count over the distinct drawn
 * rows — so a node's row count is its distinct rows (scikit-learn's min_samples_leaf counts the
 * same way) and its event rate is the bootstrap-weighted one.
 *
 * Tree t draws everything from its own stream (stream-rng.ts), so a forest is the same whatever
 * order its trees are grown in.
 */
import type { Rng } from '../../types.js';
import { drawStreamSeed, streamRng } from '../stream-rng.js';
import { binThresholds, edgeSampleRows, encodeNumeric, fitNumericBins, MAX_UINT8_BINS, valueBinCount } from './bin.js';
import { TreeParamError } from './errors.js';
import { growTree, GrowWorkspace, liveHistograms, treeArenaBytes } from './grow.js';
import { STATS } from './histogram.js';
import type { KernelArena } from '../kernel/arena.js';
import type { FlatTree } from './predict.js';

/** Numeric columns binned over the fit rows: local row i is fit row rows[i]. */
export interface BinnedMatrix {
  readonly codes: Uint8Array[];
  readonly nBins: Int32Array;
  readonly thresholds: number[][];
  readonly n: number;
}

/** With an arena, the codes live in the histogram kernel's memory while it has room (kernel/arena.ts). */
export function binMatrix(features: readonly Float64Array[], rows: Uint32Array, arena: KernelArena | null = null): BinnedMatrix {
  const sampled = edgeSampleRows(rows);
  const mappers = features.map((x) => fitNumericBins(x, rows, MAX_UINT8_BINS, sampled));
  const codes = features.map((x, c) => {
    const out = arena?.u8(rows.length) ?? new Uint8Array(rows.length);
    encodeNumeric(mappers[c], x, rows, out);
    return out;
  });
  return { codes, nBins: Int32Array.from(mappers, valueBinCount), thresholds: mappers.map(binThresholds), n: rows.length };
}

export interface ForestParams {
  readonly trees: number;
  readonly maxDepth: number;
  /** Minimum distinct fit rows per leaf. */
  readonly minLeafCount: number;
  /** Columns drawn per split; >= the column count means no sampling. */
  readonly featuresPerSplit: number;
  /** Rows drawn per tree as a fraction of the fit rows. */
  readonly sample: number;
  /** Draw with replacement (bootstrap); otherwise a subsample without replacement (all rows at sample 1). */
  readonly bootstrap: boolean;
  /** Out-of-bag rows per tree used for permutation importance (a random subset when more); 0 = skip it. */
  readonly permutationRows: number;
}

export interface ForestFit {
  readonly trees: FlatTree[];
  /** Total weighted Gini decrease per column over all trees, normalised to sum 1 (all 0 when no tree split). */
  readonly impurity: Float64Array;
  /**
   * Mean over trees of the drop in the tree's out-of-bag AUC when the column's codes are permuted
   * among that tree's out-of-bag rows; null when no tree had out-of-bag rows of both classes.
   */
  readonly permutation: Float64Array | null;
}

export function validateForestParams(p: ForestParams): void {
  if (!Number.isInteger(p.trees) || p.trees < 1) throw new TreeParamError('trees must be an integer >= 1', 'trees', p.trees);
  if (!Number.isInteger(p.featuresPerSplit) || p.featuresPerSplit < 1) {
    throw new TreeParamError('featuresPerSplit must be an integer >= 1', 'featuresPerSplit', p.featuresPerSplit);
  }
  if (!(p.sample > 0 && p.sample <= 1)) throw new TreeParamError('sample must be in (0, 1]', 'sample', p.sample);
  if (!Number.isInteger(p.permutationRows) || p.permutationRows < 0) {
    throw new TreeParamError('permutationRows must be an integer >= 0', 'permutationRows', p.permutationRows);
  }
}

/**
 * Bytes a forest fit on `rows` × `cols` asks its KernelArena for (binMatrix's codes and growForest's
 * buffers), so that both can share one arena.
 */
export function forestArenaBytes(rows: number, cols: number, p: Pick<ForestParams, 'maxDepth' | 'featuresPerSplit'>): number {
  return treeArenaBytes(rows, cols, STATS, liveHistograms(p.maxDepth, p.featuresPerSplit < cols));
}

/**
 * Grows the forest on all local rows of `m`; `y[i]` is local row i's 0/1 target. With an arena,
 * the per-tree buffers come from the histogram kernel's memory (kernel/arena.ts).
 */
export function growForest(m: BinnedMatrix, y: Uint8Array, p: ForestParams, rng: Rng, arena: KernelArena | null = null): ForestFit {
  validateForestParams(p);
  const n = m.n;
  const nCols = m.codes.length;
  const seed = drawStreamSeed(rng);
  const draws = Math.max(1, Math.round(p.sample * n));
  const counts = new Float64Array(n);
  const grad = arena?.f64(n) ?? new Float64Array(n);
  const hess = arena?.f64(n) ?? new Float64Array(n);
  const workspace = new GrowWorkspace(arena, n);
  const inBag = new Uint32Array(n);
  const oob = new Uint32Array(n);
  const perm = new PermutationScratch(Math.min(p.permutationRows, n), nCols);
  const impurity = new Float64Array(nCols);
  const sampled = p.featuresPerSplit < nCols;
  const trees: FlatTree[] = [];
  for (let t = 0; t < p.trees; t++) {
    const stream = streamRng(seed, t);
    drawRows(counts, draws, p.bootstrap, stream, inBag);
    let nIn = 0;
    let nOut = 0;
    for (let i = 0; i < n; i++) {
      const c = counts[i];
      grad[i] = c * y[i];
      hess[i] = c;
      if (c > 0) inBag[nIn++] = i;
      else oob[nOut++] = i;
    }
    const tree = growTree(
      { codes: m.codes, nBins: m.nBins, thresholds: m.thresholds, grad, hess, rows: inBag.subarray(0, nIn), workspace },
      {
        maxDepth: p.maxDepth,
        minSplit: Math.max(2, 2 * p.minLeafCount),
        split: { criterion: 'gini', minLeafCount: p.minLeafCount, minLeafHess: 0, minGain: 0, lambda: 0 },
        leafValue: 'ratio',
        featuresPerSplit: sampled ? p.featuresPerSplit : undefined,
        rng: sampled ? stream : undefined,
      },
    );
    addImpurityDecrease(tree, impurity);
    if (p.permutationRows > 0 && nOut > 0) perm.addTree(tree, m, y, oob.subarray(0, nOut), stream);
    trees.push(tree);
  }
  normalise(impurity);
  return { trees, impurity, permutation: perm.result() };
}

/** counts[i] = times local row i is drawn for one tree. */
function drawRows(counts: Float64Array, draws: number, bootstrap: boolean, rng: Rng, scratch: Uint32Array): void {
  const n = counts.length;
  if (bootstrap) {
    counts.fill(0);
    for (let k = 0; k < draws; k++) counts[rng.int(n)]++;
    return;
  }
  if (draws >= n) {
    counts.fill(1);
    return;
  }
  counts.fill(0);
  for (let i = 0; i < n; i++) scratch[i] = i;
  for (let k = 0; k < draws; k++) {
    const j = k + rng.int(n - k);
    const s = scratch[j];
    scratch[j] = scratch[k];
    scratch[k] = s;
    counts[s] = 1;
  }
}

/** Weighted Gini impurity times weight, 2·g·(h−g)/h (the split core's Gini units). */
function giniMass(g: number, h: number): number {
  return h > 0 ? (2 * g * (h - g)) / h : 0;
}

function addImpurityDecrease(t: FlatTree, into: Float64Array): void {
  for (let k = 0; k < t.nNodes; k++) {
    const f = t.feature[k];
    if (f < 0) continue;
    const l = t.left[k];
    const r = t.right[k];
    into[f] += giniMass(t.gradSum[k], t.hessSum[k]) - giniMass(t.gradSum[l], t.hessSum[l]) - giniMass(t.gradSum[r], t.hessSum[r]);
  }
}

function normalise(v: Float64Array): void {
  let s = 0;
  for (let i = 0; i < v.length; i++) s += v[i];
  if (s > 0) for (let i = 0; i < v.length; i++) v[i] /= s;
}

/**
 * Per-tree out-of-bag AUC and its drop under one column's permutation. A tree's score takes one
 * value per leaf, so the AUC comes from per-leaf class counts over leaves in value order (tied
 * values counted as ties), without sorting rows. Buffers are sized once per forest.
 *
 * Two things keep this cheap without changing a single result. The scored rows' codes of the
 * tree's columns are gathered once per tree into a small row-major block, so walks stop missing
 * the cache on the full column arrays. And permuting column f can only move a row whose path
 * meets a split on f; every other row keeps its unpermuted leaf, so only the rows listed under
 * f (from the unpermuted walk) are walked again.
 */
class PermutationScratch {
  private readonly rows: Uint32Array;
  private readonly shuffled: Uint8Array;
  private readonly baseLeaf: Int32Array;
  private readonly leaf: Int32Array;
  private readonly drop: Float64Array;
  /** slot[f]: column f's position in the gathered block, −1 when the tree does not split on it. */
  private readonly slot: Int32Array;
  private block = new Uint8Array(0);
  /** Rows whose unpermuted path meets column f: byColumn[start[f] .. start[f + 1]). */
  private byColumn = new Int32Array(0);
  private readonly start: Int32Array;
  private readonly cursor: Int32Array;
  private readonly lastRow: Int32Array;
  private treesCounted = 0;

  constructor(
    private readonly cap: number,
    nCols: number,
  ) {
    this.rows = new Uint32Array(cap);
    this.shuffled = new Uint8Array(cap);
    this.baseLeaf = new Int32Array(cap);
    this.leaf = new Int32Array(cap);
    this.drop = new Float64Array(nCols);
    this.slot = new Int32Array(nCols);
    this.start = new Int32Array(nCols + 1);
    this.cursor = new Int32Array(nCols);
    this.lastRow = new Int32Array(nCols);
  }

  addTree(t: FlatTree, m: BinnedMatrix, y: Uint8Array, oob: Uint32Array, rng: Rng): void {
    const k = Math.min(this.cap, oob.length);
    // a uniform subset of the out-of-bag rows: partial Fisher–Yates over `oob` (a scratch copy)
    for (let i = 0; i < k; i++) {
      const j = i + rng.int(oob.length - i);
      const s = oob[j];
      oob[j] = oob[i];
      oob[i] = s;
      this.rows[i] = s;
    }
    const rows = this.rows.subarray(0, k);
    const used = this.gather(t, m, rows);
    const order = leavesByValue(t);
    const pos = new Float64Array(t.nNodes);
    const neg = new Float64Array(t.nNodes);
    this.indexPaths(t, k, used);
    const base = leafAuc(this.baseLeaf, rows, y, order, t.value, pos, neg);
    if (base === null) return;
    this.treesCounted++;
    const block = this.block;
    const slot = this.slot;
    const leaf = this.leaf;
    for (let f = 0; f < slot.length; f++) {
      const sf = slot[f];
      if (sf < 0) continue;
      for (let i = 0; i < k; i++) this.shuffled[i] = block[i * used + sf];
      for (let i = k - 1; i > 0; i--) {
        const j = rng.int(i + 1);
        const s = this.shuffled[i];
        this.shuffled[i] = this.shuffled[j];
        this.shuffled[j] = s;
      }
      leaf.set(this.baseLeaf.subarray(0, k));
      for (let e = this.start[f]; e < this.start[f + 1]; e++) {
        const i = this.byColumn[e];
        leaf[i] = walkOne(t, block, i * used, slot, f, this.shuffled[i]);
      }
      this.drop[f] += base - (leafAuc(leaf, rows, y, order, t.value, pos, neg) as number);
    }
  }

  /** Gathers the rows' codes of the tree's split columns into `block`; returns the columns per row. */
  private gather(t: FlatTree, m: BinnedMatrix, rows: Uint32Array): number {
    const slot = this.slot;
    slot.fill(-1);
    let used = 0;
    for (let node = 0; node < t.nNodes; node++) {
      const f = t.feature[node];
      if (f >= 0 && slot[f] < 0) slot[f] = used++;
    }
    const k = rows.length;
    if (this.block.length < k * used) this.block = new Uint8Array(k * used);
    const block = this.block;
    for (let f = 0; f < slot.length; f++) {
      const sf = slot[f];
      if (sf < 0) continue;
      const col = m.codes[f];
      for (let i = 0; i < k; i++) block[i * used + sf] = col[rows[i]];
    }
    return used;
  }

  /**
   * Unpermuted leaf of each row, and for every column the rows whose path meets a split on it
   * (a counting pass, then a filling pass; a row is listed once per column however often its
   * path splits on it).
   */
  private indexPaths(t: FlatTree, k: number, used: number): void {
    const nCols = this.slot.length;
    const start = this.start;
    const cursor = this.cursor;
    start.fill(0);
    this.visitPaths(t, k, used, (f) => start[f + 1]++);
    for (let f = 0; f < nCols; f++) start[f + 1] += start[f];
    if (this.byColumn.length < start[nCols]) this.byColumn = new Int32Array(start[nCols]);
    cursor.set(start.subarray(0, nCols));
    const byColumn = this.byColumn;
    this.visitPaths(t, k, used, (f, i) => {
      byColumn[cursor[f]++] = i;
    });
  }

  /** Walks every gathered row unpermuted, calling `meet(f, i)` once per column on row i's path. */
  private visitPaths(t: FlatTree, k: number, used: number, meet: (f: number, i: number) => void): void {
    const { feature, thresholdBin, missingBin, missingLeft, left, right } = t;
    const block = this.block;
    const slot = this.slot;
    const lastRow = this.lastRow;
    lastRow.fill(-1);
    for (let i = 0; i < k; i++) {
      const at = i * used;
      let node = 0;
      let f = feature[0];
      while (f >= 0) {
        if (lastRow[f] !== i) {
          lastRow[f] = i;
          meet(f, i);
        }
        const code = block[at + slot[f]];
        const goLeft = code === missingBin[node] ? missingLeft[node] === 1 : code <= thresholdBin[node];
        node = goLeft ? left[node] : right[node];
        f = feature[node];
      }
      this.baseLeaf[i] = node;
    }
  }

  result(): Float64Array | null {
    if (this.treesCounted === 0) return null;
    return this.drop.map((d) => d / this.treesCounted);
  }
}

/** Leaf of one gathered row, reading `swappedCode` for column `swapped`. */
function walkOne(t: FlatTree, block: Uint8Array, at: number, slot: Int32Array, swapped: number, swappedCode: number): number {
  const { feature, thresholdBin, missingBin, missingLeft, left, right } = t;
  let node = 0;
  let f = feature[0];
  while (f >= 0) {
    const code = f === swapped ? swappedCode : block[at + slot[f]];
    const goLeft = code === missingBin[node] ? missingLeft[node] === 1 : code <= thresholdBin[node];
    node = goLeft ? left[node] : right[node];
    f = feature[node];
  }
  return node;
}

function leavesByValue(t: FlatTree): Int32Array {
  const leaves: number[] = [];
  for (let k = 0; k < t.nNodes; k++) if (t.feature[k] < 0) leaves.push(k);
  return Int32Array.from(leaves.sort((a, b) => t.value[a] - t.value[b] || a - b));
}

/** Mann–Whitney AUC of leaf values over `rows`; null when the rows hold one class only. */
function leafAuc(
  leaf: Int32Array,
  rows: Uint32Array,
  y: Uint8Array,
  order: Int32Array,
  value: Float64Array,
  pos: Float64Array,
  neg: Float64Array,
): number | null {
  pos.fill(0);
  neg.fill(0);
  let nPos = 0;
  for (let i = 0; i < rows.length; i++) {
    if (y[rows[i]] === 1) {
      pos[leaf[i]]++;
      nPos++;
    } else neg[leaf[i]]++;
  }
  const nNeg = rows.length - nPos;
  if (nPos === 0 || nNeg === 0) return null;
  let negBelow = 0;
  let u = 0;
  for (let a = 0; a < order.length; ) {
    let b = a;
    let gp = 0;
    let gn = 0;
    while (b < order.length && value[order[b]] === value[order[a]]) {
      gp += pos[order[b]];
      gn += neg[order[b]];
      b++;
    }
    u += gp * (negBelow + gn / 2);
    negBelow += gn;
    a = b;
  }
  return u / (nPos * nNeg);
}

/**
 * Columns drawn per split from a `max_features` option: null = √p rounded (Breiman 2001's
 * default for classification), a fraction < 1 = that share of p rounded, an integer = that
 * count; always at least 1 and at most p.
 */
export function featuresPerSplitFor(maxFeatures: number | null, nCols: number): number {
  const k = maxFeatures === null ? Math.round(Math.sqrt(nCols)) : maxFeatures < 1 ? Math.round(maxFeatures * nCols) : maxFeatures;
  return Math.max(1, Math.min(nCols, k));
}
