/**
 * Average precision as scikit-learn 1.2 `average_precision_score`: sum over distinct thresholds
 * of (R_k - R_{k-1}) * P_k, a step function with no interpolation (the trapezoid area under the
 * precision-recall curve is optimistic and is not this).
 */
import { scoreCurve, type ScoreCurve } from './curve.js';

/** null without events (recall is undefined). */
export function averagePrecisionFromCurve(c: ScoreCurve): number | null {
  if (c.nPos === 0) return null;
  let ap = 0;
  for (let k = 1; k <= c.blocks; k++) {
    const dRecall = c.cumPos[k] / c.nPos - c.cumPos[k - 1] / c.nPos;
    ap += dRecall * (c.cumPos[k] / (c.cumPos[k] + c.cumNeg[k]));
  }
  return ap;
}

export function averagePrecision(y: Uint8Array, p: Float64Array): number | null {
  return averagePrecisionFromCurve(scoreCurve(y, p, 'averagePrecision'));
}
