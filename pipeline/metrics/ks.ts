/**
 * Kolmogorov-Smirnov separation: max over whole-tie-block thresholds of TPR - FPR, i.e. the
 * largest gap between the score distributions of events and non-events when events score
 * higher (scipy `ks_2samp` on the two groups gives the same value for such scores).
 */
import { scoreCurve, type ScoreCurve } from './curve.js';

export interface KsResult {
  readonly ks: number;
  /** Rows with score >= threshold are flagged at the maximum (+Infinity if no cut beats flagging nobody). */
  readonly threshold: number;
  readonly tpr: number;
  readonly fpr: number;
  /** Share of all rows flagged at the threshold. */
  readonly fractionSelected: number;
}

/** null when one class is absent. The first maximum (highest threshold) wins ties. */
export function ksFromCurve(c: ScoreCurve): KsResult | null {
  if (c.nPos === 0 || c.nNeg === 0) return null;
  let best = 0;
  let bestGap = 0;
  for (let k = 1; k <= c.blocks; k++) {
    const gap = c.cumPos[k] / c.nPos - c.cumNeg[k] / c.nNeg;
    if (gap > bestGap) {
      bestGap = gap;
      best = k;
    }
  }
  return {
    ks: bestGap,
    threshold: best === 0 ? Infinity : c.score[best - 1],
    tpr: c.cumPos[best] / c.nPos,
    fpr: c.cumNeg[best] / c.nNeg,
    fractionSelected: (c.cumPos[best] + c.cumNeg[best]) / c.n,
  };
}

export function ks(y: Uint8Array, p: Float64Array): KsResult | null {
  return ksFromCurve(scoreCurve(y, p, 'ks'));
}
