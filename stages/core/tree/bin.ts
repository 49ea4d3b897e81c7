/**
 * Column binning for the tree core: every feature becomes small integer codes so that split
 * search works on per-bin sums instead of sorted raw values.
 *
 * A column with `nBins` value bins uses codes 0..nBins-1 for values and the dedicated code
 * `nBins` for a missing value (so the missing code is never a value bin and always the column's
 * last histogram slot). With at most 255 value bins every code fits a Uint8Array; callers that
 * want an exact univariate tree on a column with more distinct values (tree-bins) ask for
 * a larger `maxBins` and get Uint16Array codes.
 *
 * Mappers are plain JSON so that a fitted state can carry them into scoring.
 */
import { TreeParamError } from './errors.js';

/** Codes of one column over a compact local row index. */
export type BinCodes = Uint8Array | Uint16Array;

/** Largest number of value bins a Uint8Array column can hold (the missing code is 255). */
export const MAX_UINT8_BINS = 255;
/** Largest number of value bins a Uint16Array column can hold (the missing code is 65535). */
export const MAX_UINT16_BINS = 65535;

/**
 * Bin b holds values in (edges[b-1], edges[b]]: the tree's rule is `x <= threshold` goes left,
 * so the split "codes <= b" is exactly the raw split "x <= edges[b]".
 */
export interface NumericBinMapper {
  readonly type: 'numeric';
  readonly edges: readonly number[];
}

/**
 * Categorical levels re-coded by their training event rate. For a binary target, ordering the
 * levels by event rate and then splitting that order like a number finds the best binary
 * partition of the levels (Breiman et al. 1984, "Classification and Regression Trees", §9.4,
 * cited from memory), so a categorical column needs no special split search.
 * `levelBin[level]` is the level's bin; -1 means the level was unseen (or too rare) at fit time.
 */
export interface CategoricalBinMapper {
  readonly type: 'categorical';
  readonly levelBin: readonly number[];
  readonly nBins: number;
  /** The bin shared by levels rarer than `minLevelCount`, or -1 when there were none. */
  readonly rareBin: number;
}

export type BinMapper = NumericBinMapper | CategoricalBinMapper;

export function valueBinCount(m: BinMapper): number {
  return m.type === 'numeric' ? m.edges.length + 1 : m.nBins;
}

/**
 * Real-valued threshold of each bin boundary (length valueBinCount - 1). For a categorical
 * column the "value" is its rate-ordered bin code, so `x <= b` on the code is the split.
 */
export function binThresholds(m: BinMapper): number[] {
  if (m.type === 'numeric') return m.edges.slice();
  const t = new Array<number>(Math.max(0, m.nBins - 1));
  for (let b = 0; b < t.length; b++) t[b] = b;
  return t;
}

/**
 * The threshold between two adjacent distinct values, placed like scikit-learn's trees place it:
 * the midpoint, falling back to the lower value when rounding lands on the upper one.
 */
export function midpoint(lo: number, hi: number): number {
  const m = lo / 2 + hi / 2;
  return m >= hi || !Number.isFinite(m) ? lo : m;
}

/**
 * Quantile bin edges from the fit rows only (see `quantileEdges`): with at most `maxBins`
 * distinct values a tree on the codes can place every threshold a tree on the raw values could.
 */
export function fitNumericBins(values: Float64Array, rows: Uint32Array, maxBins: number): NumericBinMapper {
  checkMaxBins(maxBins);
  const sorted = new Float64Array(rows.length);
  let n = 0;
  for (let i = 0; i < rows.length; i++) {
    const v = values[rows[i]];
    if (v === v) sorted[n++] = v;
  }
  return { type: 'numeric', edges: quantileEdges(sorted.subarray(0, n).sort(), maxBins) };
}

/**
 * Bin edges over ascending, NaN-free values: with at most `maxBins` distinct values every one
 * is its own bin, edges at the midpoints between neighbours; with more, neighbouring values are
 * grouped greedily so that bins hold about n / maxBins values each, and a value that alone
 * reaches that size keeps a bin of its own rather than absorbing neighbours.
 */
export function quantileEdges(xs: Float64Array, maxBins: number): number[] {
  const n = xs.length;
  const distinct = new Float64Array(n);
  const counts = new Float64Array(n);
  let d = 0;
  for (let i = 0; i < n; i++) {
    if (d > 0 && xs[i] === distinct[d - 1]) counts[d - 1]++;
    else {
      distinct[d] = xs[i];
      counts[d++] = 1;
    }
  }
  const edges: number[] = [];
  if (d <= maxBins) {
    for (let k = 1; k < d; k++) edges.push(midpoint(distinct[k - 1], distinct[k]));
    return edges;
  }
  let remainingRows = n;
  let binsLeft = maxBins;
  let inBin = 0;
  for (let k = 0; k < d - 1; k++) {
    const target = remainingRows / binsLeft;
    inBin += counts[k];
    const nextAlone = counts[k + 1] >= target;
    if (binsLeft > 1 && (inBin >= target || nextAlone)) {
      edges.push(midpoint(distinct[k], distinct[k + 1]));
      remainingRows -= inBin;
      binsLeft--;
      inBin = 0;
    }
  }
  return edges;
}

/**
 * Categorical bins ordered by training event rate (ties: lower level code first, so the order
 * is deterministic). Levels seen fewer than `minLevelCount` times share one "rare" bin, placed
 * in the order by its pooled rate; if more than `maxBins` levels remain, the least frequent
 * join the rare bin too. Levels never seen at fit time go to the rare bin when there is one and
 * are treated as missing otherwise, so unseen levels never borrow a specific level's evidence.
 */
export function fitCategoricalBins(
  codes: Int32Array,
  nLevels: number,
  rows: Uint32Array,
  target: Uint8Array,
  maxBins: number,
  minLevelCount: number,
): CategoricalBinMapper {
  checkMaxBins(maxBins);
  if (!Number.isInteger(minLevelCount) || minLevelCount < 1) {
    throw new TreeParamError('minLevelCount must be an integer >= 1', 'minLevelCount', minLevelCount);
  }
  const n = new Float64Array(nLevels);
  const ev = new Float64Array(nLevels);
  for (let i = 0; i < rows.length; i++) {
    const r = rows[i];
    const c = codes[r];
    if (c >= 0 && c < nLevels) {
      n[c]++;
      ev[c] += target[r];
    }
  }
  const kept: number[] = [];
  for (let l = 0; l < nLevels; l++) if (n[l] >= minLevelCount) kept.push(l);
  kept.sort((a, b) => n[b] - n[a] || a - b);
  const room = kept.length > maxBins ? maxBins - 1 : maxBins;
  const own = kept.slice(0, room);
  const isOwn = new Uint8Array(nLevels);
  for (const l of own) isOwn[l] = 1;
  let rareN = 0;
  let rareEv = 0;
  for (let l = 0; l < nLevels; l++) {
    if (!isOwn[l] && n[l] > 0) {
      rareN += n[l];
      rareEv += ev[l];
    }
  }
  const RARE = -2;
  const groups: number[] = own.slice();
  if (rareN > 0) groups.push(RARE);
  const rateOf = (g: number): number => (g === RARE ? rareEv / rareN : ev[g] / n[g]);
  const tieKey = (g: number): number => (g === RARE ? nLevels : g);
  groups.sort((a, b) => rateOf(a) - rateOf(b) || tieKey(a) - tieKey(b));
  const levelBin = new Array<number>(nLevels).fill(-1);
  let rareBin = -1;
  groups.forEach((g, bin) => {
    if (g === RARE) rareBin = bin;
    else levelBin[g] = bin;
  });
  if (rareBin >= 0) for (let l = 0; l < nLevels; l++) if (levelBin[l] < 0) levelBin[l] = rareBin;
  return { type: 'categorical', levelBin, nBins: groups.length, rareBin };
}

/** A code array able to hold `nBins` value bins plus the missing code. */
export function allocCodes(n: number, nBins: number): BinCodes {
  return nBins <= MAX_UINT8_BINS ? new Uint8Array(n) : new Uint16Array(n);
}

/** Codes of `values[rows[i]]` into out[i]; NaN gets the missing code. */
export function encodeNumeric(m: NumericBinMapper, values: Float64Array, rows: Uint32Array, out: BinCodes): void {
  const edges = m.edges;
  const nEdges = edges.length;
  for (let i = 0; i < rows.length; i++) {
    const v = values[rows[i]];
    if (v !== v) {
      out[i] = nEdges + 1;
      continue;
    }
    let lo = 0;
    let hi = nEdges;
    while (lo < hi) {
      const mid = (lo + hi) >>> 1;
      if (edges[mid] < v) lo = mid + 1;
      else hi = mid;
    }
    out[i] = lo;
  }
}

/** Codes of level codes `codes[rows[i]]` into out[i]; -1 and unseen levels get the missing code. */
export function encodeCategorical(m: CategoricalBinMapper, codes: Int32Array, rows: Uint32Array, out: BinCodes): void {
  const map = m.levelBin;
  const missing = m.nBins;
  for (let i = 0; i < rows.length; i++) {
    const c = codes[rows[i]];
    const b = c < 0 ? -1 : c < map.length ? map[c] : m.rareBin;
    out[i] = b >= 0 ? b : missing;
  }
}

function checkMaxBins(maxBins: number): void {
  if (!Number.isInteger(maxBins) || maxBins < 2 || maxBins > MAX_UINT16_BINS) {
    throw new TreeParamError(`maxBins must be an integer in [2, ${MAX_UINT16_BINS}]`, 'maxBins', maxBins);
  }
}
