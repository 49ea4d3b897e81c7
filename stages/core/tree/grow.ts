/**
 * Depth-wise tree growth on binned columns.
 *
 * Training structure: the rows of every node of the current level are a contiguous range of one
 * Uint32Array (`order`), rearranged in place when a node splits; each live node owns one
 * histogram. After a split, the smaller child's histogram is accumulated from its rows and the
 * larger child's is the parent's minus the smaller's, computed in the parent's buffer.
 *
 * Reuse: Gini trees pass grad = weight·y and hess = weight; boosted trees pass gradients and
 * hessians; forests pass a bootstrap as repeated rows in `rows` (or as integer weights in
 * grad/hess) and ask for a random column subset per split (`featuresPerSplit` with an `rng`).
 *
 * Without column sampling, histograms cover every candidate column and the larger child comes
 * from subtraction. With column sampling, a node's histogram is accumulated directly for the
 * columns it drew only: subtraction would need the parent's histogram for every column a child
 * might draw, i.e. all of them, which costs rows × columns per level instead of rows × drawn.
 * Both give the same split for the same draw, since the search reads only the drawn columns.
 */
import type { Rng } from '../../types.js';
import type { BinCodes } from './bin.js';
import { TreeParamError } from './errors.js';
import { HistogramPool, STATS, STATS_NO_COUNT, accumulate, histogramLayout, subtractInPlace } from './histogram.js';
import type { KernelArena } from '../kernel/arena.js';
import type { FlatTree } from './predict.js';
import { SplitResult, findBestSplit, type SplitParams } from './split.js';

export interface GrowData {
  /** Bin codes per column over a local row index 0..n-1. */
  readonly codes: readonly BinCodes[];
  /** Value bins per column; code nBins[c] is column c's missing code. */
  readonly nBins: Int32Array;
  /** Real threshold of each bin boundary per column (length nBins[c] − 1), see bin.binThresholds. */
  readonly thresholds: readonly (readonly number[])[];
  /** Per local row. */
  readonly grad: Float64Array;
  readonly hess: Float64Array;
  /** Local rows to grow on; a row may repeat (bootstrap). */
  readonly rows: Uint32Array;
  /**
   * When given, leafOf[r] is set to the leaf reached by every local row r in `rows`, so a caller
   * that keeps running predictions (boosting) need not run those rows through the tree again.
   */
  readonly leafOf?: Int32Array;
  /** Buffers kept across calls (boosting rounds); without it each call allocates its own. */
  readonly workspace?: GrowWorkspace;
}

/**
 * Histogram and row-order buffers that one caller reuses across many trees on the same
 * columns, so that after the first tree growing allocates no large arrays: a depth-5 tree on
 * 30 × 255 bins otherwise allocates (and zero-fills) about 3 MB of histograms per tree.
 */
export class GrowWorkspace {
  private pool: HistogramPool | null = null;
  private poolSize = -1;
  private order = new Uint32Array(0);
  private scratch = new Uint32Array(0);

  /**
   * With an arena, buffers come from the kernel's memory (kernel/arena.ts) while it has room; the
   * row buffers are then sized for `maxRows` at once, as the arena cannot take them back.
   */
  constructor(
    private readonly arena: KernelArena | null = null,
    private readonly maxRows = 0,
  ) {}

  histograms(size: number): HistogramPool {
    if (this.pool === null || this.poolSize !== size) {
      this.pool = new HistogramPool(size, this.arena);
      this.poolSize = size;
    }
    return this.pool;
  }

  /** Row-order array holding a copy of `rows`, and a scratch array of the same length. */
  rowBuffers(rows: Uint32Array): { order: Uint32Array; scratch: Uint32Array } {
    if (this.order.length < rows.length) {
      const size = Math.max(rows.length, this.maxRows);
      this.order = this.arena?.u32(size) ?? new Uint32Array(size);
      this.scratch = this.arena?.u32(size) ?? new Uint32Array(size);
    }
    const order = this.order.subarray(0, rows.length);
    order.set(rows);
    return { order, scratch: this.scratch.subarray(0, rows.length) };
  }
}

/**
 * Bytes a fit on `rows` local rows × `cols` 8-bit columns asks its KernelArena for: the codes, the
 * gradient and hessian arrays, the workspace's row buffers, and `hists` histograms of up to 256
 * slots per column with `stats` values each.
 */
export function treeArenaBytes(rows: number, cols: number, stats: number, hists: number): number {
  const align = 16;
  const histBytes = cols * 256 * stats * 8 + align;
  return cols * (rows + align) + 2 * (8 * rows + align) + 2 * (4 * rows + align) + hists * histBytes;
}

/**
 * Histograms alive at once while growing one tree (one per node of the deepest level that still
 * needs one, and a spare), capped at 65: deeper trees take the rest as plain arrays.
 */
export function liveHistograms(maxDepth: number, sampled: boolean): number {
  return sampled ? 1 : 2 ** Math.max(0, Math.min(maxDepth - 1, 6)) + 1;
}

export type LeafValue = 'ratio' | 'newton';

export interface GrowOptions {
  /** Number of split levels; 0 gives a single leaf. */
  readonly maxDepth: number;
  /** A node with fewer rows is not split (scikit-learn's min_samples_split). */
  readonly minSplit: number;
  readonly split: SplitParams;
  /** `ratio`: grad/hess (event rate for Gini trees); `newton`: −grad/(hess+λ). */
  readonly leafValue: LeafValue;
  /** Columns a split may use (default: all), ascending. */
  readonly candidates?: Int32Array;
  /** Draw this many candidate columns per split (forests); needs `rng`. */
  readonly featuresPerSplit?: number;
  readonly rng?: Rng;
}

const MAX_DEPTH_LIMIT = 64;

export function validateGrowOptions(o: GrowOptions, nCols: number): void {
  if (!Number.isInteger(o.maxDepth) || o.maxDepth < 0 || o.maxDepth > MAX_DEPTH_LIMIT) {
    throw new TreeParamError(`maxDepth must be an integer in [0, ${MAX_DEPTH_LIMIT}]`, 'maxDepth', o.maxDepth);
  }
  if (!Number.isInteger(o.minSplit) || o.minSplit < 2) throw new TreeParamError('minSplit must be an integer >= 2', 'minSplit', o.minSplit);
  const s = o.split;
  if (!Number.isInteger(s.minLeafCount) || s.minLeafCount < 1) {
    throw new TreeParamError('minLeafCount must be an integer >= 1', 'minLeafCount', s.minLeafCount);
  }
  if (!(s.minLeafHess >= 0)) throw new TreeParamError('minLeafHess must be >= 0', 'minLeafHess', s.minLeafHess);
  if (!(s.minGain >= 0)) throw new TreeParamError('minGain must be >= 0', 'minGain', s.minGain);
  if (!(s.lambda >= 0)) throw new TreeParamError('lambda must be >= 0', 'lambda', s.lambda);
  if (o.candidates) {
    for (let k = 0; k < o.candidates.length; k++) {
      const c = o.candidates[k];
      if (c < 0 || c >= nCols || (k > 0 && c <= o.candidates[k - 1])) {
        throw new TreeParamError('candidates must be ascending column indices', 'candidates', Array.from(o.candidates));
      }
    }
  }
  if (o.featuresPerSplit !== undefined) {
    if (!Number.isInteger(o.featuresPerSplit) || o.featuresPerSplit < 1) {
      throw new TreeParamError('featuresPerSplit must be an integer >= 1', 'featuresPerSplit', o.featuresPerSplit);
    }
    if (!o.rng) throw new TreeParamError('featuresPerSplit needs an rng', 'rng', null);
  }
}

interface LiveNode {
  id: number;
  start: number;
  end: number;
  hist: Float64Array;
}

/** Grow one tree. Validates its parameters once, then runs allocation-free inner loops. */
export function growTree(data: GrowData, opts: GrowOptions): FlatTree {
  const nCols = data.codes.length;
  validateGrowOptions(opts, nCols);
  if (data.nBins.length !== nCols || data.thresholds.length !== nCols) {
    throw new TreeParamError('codes, nBins and thresholds must have one entry per column', 'nCols', nCols);
  }
  // Gradient trees with no row-count minimum need no row counts in their histograms (see histogram.ts).
  const countless = opts.split.criterion === 'gradient' && opts.split.minLeafCount <= 1;
  const layout = histogramLayout(data.nBins, countless ? STATS_NO_COUNT : STATS);
  const ws = data.workspace ?? new GrowWorkspace();
  const pool = ws.histograms(layout.size);
  const cand = opts.candidates ?? Int32Array.from({ length: nCols }, (_, c) => c);
  const nCand = cand.length;
  const perSplit = Math.min(opts.featuresPerSplit ?? nCand, nCand);
  const drawn = new Int32Array(cand);
  const lambda = opts.split.lambda;
  const leafOf = data.leafOf;
  const markLeaf = (id: number, start: number, end: number): void => {
    if (leafOf) for (let i = start; i < end; i++) leafOf[order[i]] = id;
  };

  const { order, scratch } = ws.rowBuffers(data.rows);
  const { grad, hess } = data;
  const nodes = new NodeBuilder();
  const best = new SplitResult();

  let g0 = 0;
  let h0 = 0;
  for (let i = 0; i < order.length; i++) {
    g0 += grad[order[i]];
    h0 += hess[order[i]];
  }
  const sampled = perSplit < nCand;
  // in sampled mode every node shares the root's buffer; it goes back to the pool once, at the end
  const release = (h: Float64Array): void => {
    if (!sampled) pool.give(h);
  };
  const root = pool.take();
  if (!sampled) accumulate(root, layout, data.codes, cand, nCand, order, 0, order.length, grad, hess);
  let level: LiveNode[] = [{ id: nodes.add(0, g0, h0, order.length, valueOf(opts.leafValue, g0, h0, lambda)), start: 0, end: order.length, hist: root }];

  for (let depth = 0; level.length > 0; depth++) {
    const next: LiveNode[] = [];
    for (const node of level) {
      const n = node.end - node.start;
      if (depth >= opts.maxDepth || n < opts.minSplit) {
        markLeaf(node.id, node.start, node.end);
        release(node.hist);
        continue;
      }
      const cols = sampled ? sampleColumns(drawn, perSplit, opts.rng as Rng) : cand;
      const nUse = sampled ? perSplit : nCand;
      if (sampled) accumulate(node.hist, layout, data.codes, cols, nUse, order, node.start, node.end, grad, hess);
      findBestSplit(node.hist, layout, cols, nUse, nodes.grad[node.id], nodes.hess[node.id], n, opts.split, best);
      if (best.feature < 0) {
        markLeaf(node.id, node.start, node.end);
        release(node.hist);
        continue;
      }
      const f = best.feature;
      const mid = partition(order, node.start, node.end, data.codes[f], best.bin, data.nBins[f], best.missingLeft, scratch);
      const lg = best.leftGrad;
      const lh = best.leftHess;
      const rg = nodes.grad[node.id] - lg;
      const rh = nodes.hess[node.id] - lh;
      const leftId = nodes.add(depth + 1, lg, lh, mid - node.start, valueOf(opts.leafValue, lg, lh, lambda));
      const rightId = nodes.add(depth + 1, rg, rh, node.end - mid, valueOf(opts.leafValue, rg, rh, lambda));
      const edges = data.thresholds[f];
      nodes.setSplit(node.id, f, best.bin, best.bin < edges.length ? edges[best.bin] : Infinity, data.nBins[f], best.missingLeft, leftId, rightId);
      if (depth + 1 >= opts.maxDepth) {
        markLeaf(leftId, node.start, mid);
        markLeaf(rightId, mid, node.end);
        release(node.hist);
        continue;
      }
      if (sampled) {
        // children fill their own histograms when their turn comes; one buffer serves a level
        next.push({ id: leftId, start: node.start, end: mid, hist: node.hist });
        next.push({ id: rightId, start: mid, end: node.end, hist: node.hist });
        continue;
      }
      const small = pool.take();
      const leftSmaller = mid - node.start <= node.end - mid;
      if (leftSmaller) accumulate(small, layout, data.codes, cand, nCand, order, node.start, mid, grad, hess);
      else accumulate(small, layout, data.codes, cand, nCand, order, mid, node.end, grad, hess);
      subtractInPlace(node.hist, small, layout, cand, nCand);
      next.push({ id: leftId, start: node.start, end: mid, hist: leftSmaller ? small : node.hist });
      next.push({ id: rightId, start: mid, end: node.end, hist: leftSmaller ? node.hist : small });
    }
    level = next;
  }
  if (sampled) pool.give(root);
  return nodes.finish();
}

function valueOf(kind: LeafValue, g: number, h: number, lambda: number): number {
  if (kind === 'ratio') return h > 0 ? g / h : 0;
  return -g / (h + lambda);
}

/** Partial Fisher–Yates: the first k entries of `cols` become a uniform sample, then sorted so ties resolve by column index. */
function sampleColumns(cols: Int32Array, k: number, rng: Rng): Int32Array {
  const n = cols.length;
  for (let i = 0; i < k; i++) {
    const j = i + rng.int(n - i);
    const t = cols[i];
    cols[i] = cols[j];
    cols[j] = t;
  }
  cols.subarray(0, k).sort();
  return cols;
}

/**
 * Rearranges order[start..end) so left-going rows come first, each side keeping its relative
 * order; returns the first right index. Keeping rows ascending within a node (they start
 * ascending) makes the histogram pass read codes and gradients nearly sequentially; an
 * unstable swap partition scrambles them and made that pass several times slower on large data.
 */
function partition(
  order: Uint32Array,
  start: number,
  end: number,
  code: BinCodes,
  bin: number,
  missingCode: number,
  missingLeft: boolean,
  scratch: Uint32Array,
): number {
  let l = start;
  let s = 0;
  const ml = missingLeft ? 1 : 0;
  // Branch-free: each row is written to both sides and only its own side's cursor advances (a
  // stale write at order[l] is overwritten later). Which side a row takes is a coin flip for
  // the CPU's predictor, and the branchy form spent most of its time in mispredictions.
  for (let i = start; i < end; i++) {
    const r = order[i];
    const c = code[r];
    const goLeft = c === missingCode ? ml : ((bin - c) >>> 31) ^ 1;
    order[l] = r;
    scratch[s] = r;
    l += goLeft;
    s += 1 - goLeft;
  }
  order.set(scratch.subarray(0, s), l);
  return l;
}

/** Growable node storage, converted to a FlatTree at the end. */
class NodeBuilder {
  readonly grad: number[] = [];
  readonly hess: number[] = [];
  private readonly count: number[] = [];
  private readonly value: number[] = [];
  private readonly depth: number[] = [];
  private readonly feature: number[] = [];
  private readonly thresholdBin: number[] = [];
  private readonly threshold: number[] = [];
  private readonly missingBin: number[] = [];
  private readonly missingLeft: number[] = [];
  private readonly left: number[] = [];
  private readonly right: number[] = [];

  add(depth: number, g: number, h: number, n: number, value: number): number {
    const id = this.grad.length;
    this.grad.push(g);
    this.hess.push(h);
    this.count.push(n);
    this.value.push(value);
    this.depth.push(depth);
    this.feature.push(-1);
    this.thresholdBin.push(-1);
    this.threshold.push(0);
    this.missingBin.push(-1);
    this.missingLeft.push(0);
    this.left.push(-1);
    this.right.push(-1);
    return id;
  }

  setSplit(id: number, f: number, bin: number, threshold: number, missingBin: number, missingLeft: boolean, l: number, r: number): void {
    this.feature[id] = f;
    this.thresholdBin[id] = bin;
    this.threshold[id] = threshold;
    this.missingBin[id] = missingBin;
    this.missingLeft[id] = missingLeft ? 1 : 0;
    this.left[id] = l;
    this.right[id] = r;
  }

  finish(): FlatTree {
    return {
      nNodes: this.grad.length,
      feature: Int32Array.from(this.feature),
      threshold: Float64Array.from(this.threshold),
      thresholdBin: Int32Array.from(this.thresholdBin),
      missingBin: Int32Array.from(this.missingBin),
      missingLeft: Uint8Array.from(this.missingLeft),
      left: Int32Array.from(this.left),
      right: Int32Array.from(this.right),
      value: Float64Array.from(this.value),
      count: Float64Array.from(this.count),
      gradSum: Float64Array.from(this.grad),
      hessSum: Float64Array.from(this.hess),
      depth: Int32Array.from(this.depth),
    };
  }
}
