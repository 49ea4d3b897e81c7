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
 * Up to this many fit rows every row is in the edge sample. Above it a fixed hash of the row
 * index picks about this many: reproducible, independent of row order and of any seed, and
 * enough for 255 quantile bins of ~64 sampled rows each (common practice, no source).
 */
export const SAMPLE_ROWS = 1 << 14;

/** Murmur3's 32-bit finalizer: a well-mixed hash of the row index for sampling. */
function mix32(h: number): number {
  h ^= h >>> 16;
  h = Math.imul(h, 0x85ebca6b);
  h ^= h >>> 13;
  h = Math.imul(h, 0xc2b2ae35);
  h ^= h >>> 16;
  return h >>> 0;
}

/** Hash cut for a fit of n rows: a row is in the edge sample when mix32(row) < the cut. */
function sampleCut(n: number): number {
  return n <= SAMPLE_ROWS ? 0x1_0000_0000 : Math.floor((SAMPLE_ROWS / n) * 0x1_0000_0000);
}

/**
 * The rows of `rows` that the edge sample of a fit on `n` of them (default: all) can pick. A fit
 * on any n' >= n of these rows samples a subset of them, so callers binning many columns over the
 * same rows hash each row once here instead of once per column.
 */
export function edgeSampleRows(rows: Uint32Array, n: number = rows.length): Uint32Array {
  const cut = sampleCut(n);
  if (cut === 0x1_0000_0000) return rows;
  let k = 0;
  const out = new Uint32Array(rows.length);
  for (let i = 0; i < rows.length; i++) if (mix32(rows[i]) < cut) out[k++] = rows[i];
  return out.slice(0, k);
}

/**
 * The sorted non-missing values of the edge sample of a fit on `n` rows (see SAMPLE_ROWS), read
 * from `rows`, which must hold every row that sample picks: the fit rows themselves (n defaults
 * to their count), or edgeSampleRows of a superset with at most n rows' cut.
 */
export function edgeSample(x: Float64Array, rows: Uint32Array, n: number = rows.length): Float64Array {
  const cut = sampleCut(n);
  const all = cut === 0x1_0000_0000;
  let picked = new Float64Array(Math.min(rows.length, SAMPLE_ROWS + (SAMPLE_ROWS >>> 3)));
  let k = 0;
  for (let i = 0; i < rows.length; i++) {
    const r = rows[i];
    if (!all && mix32(r) >= cut) continue;
    const v = x[r];
    if (v !== v) continue;
    if (k === picked.length) {
      const grown = new Float64Array(k * 2);
      grown.set(picked);
      picked = grown;
    }
    picked[k++] = v;
  }
  return picked.subarray(0, k).sort();
}

/**
 * Quantile bin edges from the fit rows only (see `quantileEdges`), taken from the edge sample
 * (`sampled`: edgeSampleRows(rows), passed in by callers binning many columns over these rows):
 * when the sample holds every distinct value and there are at most `maxBins` of them (always so
 * up to SAMPLE_ROWS fit rows), a tree on the codes can place every threshold a tree on the raw
 * values could.
 */
export function fitNumericBins(values: Float64Array, rows: Uint32Array, maxBins: number, sampled: Uint32Array = edgeSampleRows(rows)): NumericBinMapper {
  checkMaxBins(maxBins);
  return { type: 'numeric', edges: quantileEdges(edgeSample(values, sampled, rows.length), maxBins) };
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
  const missing = edges.length + 1;
  const grid = edgeGrid(edges);
  for (let i = 0; i < rows.length; i++) {
    const v = values[rows[i]];
    if (v !== v) {
      out[i] = missing;
      continue;
    }
    out[i] = binOf(grid, edges, v);
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

/**
 * A uniform grid over the edges' range that narrows each value's bin search to the edges sharing
 * its grid cell — usually none or one — instead of a full binary search (which costs about eight
 * unpredictable branches per row). Correct under rounding because the cell map is monotone: an
 * edge in a lower cell is below the value and an edge in a higher cell above it.
 */
export interface EdgeGrid {
  readonly origin: number;
  readonly scale: number;
  /** Highest cell; cells are 0..cells. */
  readonly cells: number;
  /** first[c]: how many edges lie in cells below c (length cells + 2). */
  readonly first: Int32Array;
}

const GRID_CELLS = 2048;

export function edgeGrid(edges: ArrayLike<number>): EdgeGrid {
  const m = edges.length;
  const origin = m > 0 ? edges[0] : 0;
  const span = m > 1 ? edges[m - 1] - origin : 0;
  const scale = span > 0 && Number.isFinite(span) ? GRID_CELLS / span : 0;
  const first = new Int32Array(GRID_CELLS + 2);
  for (let k = 0; k < m; k++) {
    const c = (edges[k] - origin) * scale;
    const cell = c >= GRID_CELLS ? GRID_CELLS : c > 0 ? c | 0 : 0;
    first[cell + 1]++;
  }
  for (let c = 1; c < first.length; c++) first[c] += first[c - 1];
  return { origin, scale, cells: GRID_CELLS, first };
}

/** Bin of a non-missing value `v` (how many edges lie below it), searching only its grid cell. */
export function binOf(grid: EdgeGrid, edges: ArrayLike<number>, v: number): number {
  const c = (v - grid.origin) * grid.scale;
  const cell = c >= grid.cells ? grid.cells : c > 0 ? c | 0 : 0;
  let lo = grid.first[cell];
  let hi = grid.first[cell + 1];
  while (lo < hi) {
    const mid = (lo + hi) >>> 1;
    if (edges[mid] < v) lo = mid + 1;
    else hi = mid;
  }
  return lo;
}
