/**
 * ROC AUC as the Mann-Whitney statistic: the share of (event, non-event) pairs ranked in the
 * right order, a tied pair counting 1/2. Summed in integer arithmetic over tie blocks, so the
 * result is the exact fraction rounded once (exact for n_pos * n_neg < 2^52).
 */
import { scoreCurve, type ScoreCurve } from './curve.js';

/** null when one class is absent (no pairs to rank). */
export function aucFromCurve(c: ScoreCurve): number | null {
  if (c.nPos === 0 || c.nNeg === 0) return null;
  let twiceConcordant = 0;
  for (let k = 1; k <= c.blocks; k++) {
    const dNeg = c.cumNeg[k] - c.cumNeg[k - 1];
    const dPos = c.cumPos[k] - c.cumPos[k - 1];
    twiceConcordant += dNeg * (2 * c.cumPos[k - 1] + dPos);
  }
  return twiceConcordant / (2 * c.nPos * c.nNeg);
}

export function auc(y: Uint8Array, p: Float64Array): number | null {
  return aucFromCurve(scoreCurve(y, p, 'auc'));
}

/** Gini (accuracy ratio) = 2 AUC - 1. */
export function gini(y: Uint8Array, p: Float64Array): number | null {
  const a = auc(y, p);
  return a === null ? null : 2 * a - 1;
}

export interface RocCurve {
  readonly fpr: Float64Array;
  readonly tpr: Float64Array;
  /** Rows with score >= threshold are flagged; the first point (0, 0) has threshold +Infinity. */
  readonly thresholds: Float64Array;
}

/**
 * One point per distinct score plus the origin. Unlike scikit-learn's default, collinear points
 * are kept: the curve is for plotting and for reading operating points, not for size.
 * null when one class is absent.
 */
export function rocCurveFromCurve(c: ScoreCurve): RocCurve | null {
  if (c.nPos === 0 || c.nNeg === 0) return null;
  const m = c.blocks + 1;
  const fpr = new Float64Array(m);
  const tpr = new Float64Array(m);
  const thresholds = new Float64Array(m);
  thresholds[0] = Infinity;
  for (let k = 0; k < m; k++) {
    fpr[k] = c.cumNeg[k] / c.nNeg;
    tpr[k] = c.cumPos[k] / c.nPos;
    if (k > 0) thresholds[k] = c.score[k - 1];
  }
  return { fpr, tpr, thresholds };
}

export function rocCurve(y: Uint8Array, p: Float64Array): RocCurve | null {
  return rocCurveFromCurve(scoreCurve(y, p, 'rocCurve'));
}
