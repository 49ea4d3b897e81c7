/**
 * Stratified bootstrap percentile intervals for any metric: events and non-events are resampled
 * separately with replacement, each keeping its size, so every replicate has the original base
 * rate (as pROC's boot.stratified = TRUE). The interval is the (1-level)/2 and (1+level)/2
 * quantiles of the replicate values (linear interpolation, R type 7 / numpy default).
 */
import type { Rng } from '../../stages/types.js';
import { MetricInputError, checkFraction, checkScores } from './input.js';
import { quantileSorted } from './quantile.js';

/** A metric of (target, scores); null where it is undefined. */
export type MetricFn = (y: Uint8Array, p: Float64Array) => number | null;

export interface BootstrapOptions {
  /** Default 1,000. */
  readonly replicates?: number;
  /** Default 0.95. */
  readonly level?: number;
}

export interface BootstrapCi {
  /** The metric on the original rows (for the paired variant: the difference). */
  readonly estimate: number | null;
  readonly low: number;
  readonly high: number;
  readonly level: number;
  readonly replicates: number;
  /** Replicates where the metric was defined; the interval uses only these. */
  readonly valid: number;
}

export const DEFAULT_REPLICATES = 1000;

/**
 * Replicate draws: for each replicate, nEvents draws rng.int(nEvents) then nNonEvents draws
 * rng.int(nNonEvents). The same Rng state therefore gives the same interval.
 * null when a class is empty or no replicate gives a defined value.
 */
export function stratifiedBootstrapCi(
  y: Uint8Array,
  p: Float64Array,
  metric: MetricFn,
  rng: Rng,
  options: BootstrapOptions = {},
): BootstrapCi | null {
  return run('stratifiedBootstrapCi', y, [p], (yb, pb) => metric(yb, pb[0]), metric(y, p), rng, options);
}

/**
 * CI of metric(y, p1) - metric(y, p2) with both evaluated on the same resampled rows in each
 * replicate, so the correlation between the two scores is kept.
 */
export function pairedBootstrapCi(
  y: Uint8Array,
  p1: Float64Array,
  p2: Float64Array,
  metric: MetricFn,
  rng: Rng,
  options: BootstrapOptions = {},
): BootstrapCi | null {
  checkScores('pairedBootstrapCi', y, p2);
  const diff = (yb: Uint8Array, pb: readonly Float64Array[]): number | null => {
    const a = metric(yb, pb[0]);
    const b = metric(yb, pb[1]);
    return a === null || b === null ? null : a - b;
  };
  return run('pairedBootstrapCi', y, [p1, p2], diff, diff(y, [p1, p2]), rng, options);
}

function run(
  name: string,
  y: Uint8Array,
  scores: readonly Float64Array[],
  stat: (yb: Uint8Array, pb: readonly Float64Array[]) => number | null,
  estimate: number | null,
  rng: Rng,
  options: BootstrapOptions,
): BootstrapCi | null {
  const replicates = options.replicates ?? DEFAULT_REPLICATES;
  const level = options.level ?? 0.95;
  if (!Number.isInteger(replicates) || replicates < 1) throw new MetricInputError('replicates must be a positive integer', name, { replicates });
  checkFraction(name, 'level', level);
  const nPos = checkScores(name, y, scores[0]);
  const n = y.length;
  const nNeg = n - nPos;
  if (nPos === 0 || nNeg === 0) return null;
  const posRows = new Uint32Array(nPos);
  const negRows = new Uint32Array(nNeg);
  for (let i = 0, a = 0, b = 0; i < n; i++) {
    if (y[i] === 1) posRows[a++] = i;
    else negRows[b++] = i;
  }
  // Resampled rows keep events first, so the resampled target never changes and is built once.
  const yb = new Uint8Array(n);
  yb.fill(1, 0, nPos);
  const pb = scores.map(() => new Float64Array(n));
  const rows = new Uint32Array(n);
  const values = new Float64Array(replicates);
  let valid = 0;
  for (let r = 0; r < replicates; r++) {
    for (let k = 0; k < nPos; k++) rows[k] = posRows[rng.int(nPos)];
    for (let k = 0; k < nNeg; k++) rows[nPos + k] = negRows[rng.int(nNeg)];
    for (let s = 0; s < scores.length; s++) {
      const src = scores[s];
      const dst = pb[s];
      for (let k = 0; k < n; k++) dst[k] = src[rows[k]];
    }
    const v = stat(yb, pb);
    if (v !== null && Number.isFinite(v)) values[valid++] = v;
  }
  if (valid === 0) return null;
  const sorted = values.subarray(0, valid).sort();
  return {
    estimate,
    low: quantileSorted(sorted, (1 - level) / 2),
    high: quantileSorted(sorted, (1 + level) / 2),
    level,
    replicates,
    valid,
  };
}

/**
 * The same interval as `stratifiedBootstrapCi` with the tie-fractional capture at `budget` as the
 * metric — same draws, same value per replicate — without sorting each replicate: the rows are
 * sorted once into blocks of equal score, and a replicate only counts how often each block was
 * drawn, then walks the blocks. O(n) per replicate instead of O(n log n).
 *
 * The walk stops near the budget, so only the leading blocks need their own counters: blocks
 * beyond a generous margin share one tail counter, which keeps the counters in cache (scattered
 * increments into n counters were most of the time). A replicate whose walk reaches the tail —
 * beyond CAPTURE_MARGIN_SD standard deviations of its count, which should never happen — is
 * recounted exactly from its recorded draws, so the result never depends on the margin.
 */
export function stratifiedCaptureCi(
  y: Uint8Array,
  p: Float64Array,
  budget: number,
  rng: Rng,
  options: BootstrapOptions & { readonly marginSd?: number } = {},
): BootstrapCi | null {
  const name = 'stratifiedCaptureCi';
  const replicates = options.replicates ?? DEFAULT_REPLICATES;
  const level = options.level ?? 0.95;
  if (!Number.isInteger(replicates) || replicates < 1) throw new MetricInputError('replicates must be a positive integer', name, { replicates });
  checkFraction(name, 'level', level);
  checkFraction(name, 'budget', budget);
  const nPos = checkScores(name, y, p);
  const n = y.length;
  const nNeg = n - nPos;
  if (nPos === 0 || nNeg === 0) return null;
  const order = new Uint32Array(n);
  for (let i = 0; i < n; i++) order[i] = i;
  order.sort((a, b) => p[b] - p[a]);
  const blockOf = new Uint32Array(n);
  let blocks = 0;
  for (let k = 0; k < n; k++) {
    if (k > 0 && p[order[k]] !== p[order[k - 1]]) blocks++;
    blockOf[order[k]] = blocks;
  }
  blocks++;
  // Blocks whose original count ends within budget·n + margin keep their own counter; the rest share one.
  const margin = (options.marginSd ?? CAPTURE_MARGIN_SD) * Math.sqrt(n) + 1;
  let lead = 0;
  for (let seen = 0; lead < blocks; lead++) {
    if (seen > budget * n + margin) break;
    let k = seen;
    while (k < n && blockOf[order[k]] === lead) k++;
    seen = k;
  }
  const tail = lead;
  const posBlock = new Uint32Array(nPos);
  const negBlock = new Uint32Array(nNeg);
  for (let i = 0, a = 0, b = 0; i < n; i++) {
    const g = blockOf[i] < tail ? blockOf[i] : tail;
    if (y[i] === 1) posBlock[a++] = g;
    else negBlock[b++] = g;
  }
  const wPos = new Float64Array(blocks);
  const wNeg = new Float64Array(blocks);
  /** Capture from per-block counts over blocks 0..upTo; null when the walk runs past upTo without reaching the budget. */
  const captureOfCounts = (upTo: number): number | null => {
    // Gains points sit at block ends; empty blocks add no point (a replicate may not draw them).
    let cumPos = 0;
    let cumAll = 0;
    for (let g = 0; g < upTo; g++) {
      const w = wPos[g] + wNeg[g];
      if (w === 0) continue;
      const nextPos = cumPos + wPos[g];
      const nextAll = cumAll + w;
      if (nextAll / n > budget) {
        const x0 = cumAll / n;
        const f0 = cumPos / nPos;
        return ((nextPos / nPos - f0) / (nextAll / n - x0)) * (budget - x0) + f0;
      }
      cumPos = nextPos;
      cumAll = nextAll;
    }
    return upTo < blocks ? null : cumPos / nPos;
  };
  for (let i = 0; i < n; i++) {
    if (y[i] === 1) wPos[blockOf[i]]++;
    else wNeg[blockOf[i]]++;
  }
  const estimate = captureOfCounts(blocks) as number;
  const values = new Float64Array(replicates);
  const drawnPos = new Uint32Array(nPos);
  const drawnNeg = new Uint32Array(nNeg);
  const fullPos = new Uint32Array(nPos);
  const fullNeg = new Uint32Array(nNeg);
  for (let i = 0, a = 0, b = 0; i < n; i++) {
    if (y[i] === 1) fullPos[a++] = blockOf[i];
    else fullNeg[b++] = blockOf[i];
  }
  for (let r = 0; r < replicates; r++) {
    wPos.fill(0, 0, tail + 1);
    wNeg.fill(0, 0, tail + 1);
    for (let k = 0; k < nPos; k++) {
      const d = rng.int(nPos);
      drawnPos[k] = d;
      wPos[posBlock[d]]++;
    }
    for (let k = 0; k < nNeg; k++) {
      const d = rng.int(nNeg);
      drawnNeg[k] = d;
      wNeg[negBlock[d]]++;
    }
    let v = captureOfCounts(tail);
    if (v === null) {
      wPos.fill(0);
      wNeg.fill(0);
      for (let k = 0; k < nPos; k++) wPos[fullPos[drawnPos[k]]]++;
      for (let k = 0; k < nNeg; k++) wNeg[fullNeg[drawnNeg[k]]]++;
      v = captureOfCounts(blocks) as number;
    }
    values[r] = v;
  }
  const sorted = values.sort();
  return { estimate, low: quantileSorted(sorted, (1 - level) / 2), high: quantileSorted(sorted, (1 + level) / 2), level, replicates, valid: replicates };
}

/**
 * Margin of the capture bootstrap's leading blocks, in standard deviations of a replicate's row
 * count above the budget (at most √n / 2): far beyond any draw, yet a small share of the rows.
 * Tests pass `marginSd: 0` to send replicates down the exact recount.
 */
export const CAPTURE_MARGIN_SD = 20;
