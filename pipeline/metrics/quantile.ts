/**
 * numpy's grid and quantile arithmetic, reproduced operation for operation: calibration bins
 * and PSI deciles put rows on edges that coincide with data values (heavily tied scores), so an
 * edge that differs in the last bit moves whole tie blocks between bins.
 */

/** numpy.linspace(start, stop, num): i * step + start, with the last point set to stop. */
export function linspace(start: number, stop: number, num: number): Float64Array {
  const out = new Float64Array(num);
  const step = (stop - start) / (num - 1);
  for (let i = 0; i < num; i++) out[i] = i * step + start;
  if (num > 1) out[num - 1] = stop;
  return out;
}

/**
 * numpy.quantile(x, q) with the default 'linear' method (R type 7) on ascending `sorted`:
 * virtual index (n-1) q, and numpy's two-sided lerp that is exact at both ends.
 */
export function quantileSorted(sorted: Float64Array, q: number): number {
  const n = sorted.length;
  const v = (n - 1) * q;
  const lo = Math.min(Math.floor(v), n - 1);
  const hi = Math.min(lo + 1, n - 1);
  const g = v - lo;
  const a = sorted[lo];
  const d = sorted[hi] - a;
  return g >= 0.5 ? sorted[hi] - d * (1 - g) : a + d * g;
}

/** Number of `edges` (ascending) strictly below x: numpy.searchsorted(edges, x, side='left'). */
export function countBelow(edges: Float64Array, x: number): number {
  let lo = 0;
  let hi = edges.length;
  while (lo < hi) {
    const mid = (lo + hi) >>> 1;
    if (edges[mid] < x) lo = mid + 1;
    else hi = mid;
  }
  return lo;
}
