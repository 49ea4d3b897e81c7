/**
 * Partial AUC over FPR in [0, maxFpr], as scikit-learn 1.2 `roc_auc_score(max_fpr=...)`: the
 * trapezoid area under the tie-block ROC curve with TPR linearly interpolated at maxFpr, and
 * McClish's (1989) standardisation of it (0.5 = chance, 1 = perfect over that range).
 */
import { scoreCurve, type ScoreCurve } from './curve.js';
import { checkFraction } from './input.js';

export interface PartialAuc {
  /** Unstandardised area; at most maxFpr. */
  readonly raw: number;
  /** McClish: 0.5 * (1 + (raw - maxFpr^2/2) / (maxFpr - maxFpr^2/2)). */
  readonly mcclish: number;
}

/** null when one class is absent. */
export function partialAucFromCurve(c: ScoreCurve, maxFpr: number): PartialAuc | null {
  checkFraction('partialAuc', 'maxFpr', maxFpr);
  if (c.nPos === 0 || c.nNeg === 0) return null;
  let area = 0;
  let f0 = 0;
  let t0 = 0;
  for (let k = 1; k <= c.blocks; k++) {
    const f1 = c.cumNeg[k] / c.nNeg;
    const t1 = c.cumPos[k] / c.nPos;
    if (f1 > maxFpr) {
      const tAt = t0 + ((t1 - t0) / (f1 - f0)) * (maxFpr - f0);
      area += ((maxFpr - f0) * (t0 + tAt)) / 2;
      break;
    }
    area += ((f1 - f0) * (t0 + t1)) / 2;
    f0 = f1;
    t0 = t1;
  }
  const minArea = (maxFpr * maxFpr) / 2;
  return { raw: area, mcclish: 0.5 * (1 + (area - minArea) / (maxFpr - minArea)) };
}

export function partialAuc(y: Uint8Array, p: Float64Array, maxFpr: number): PartialAuc | null {
  return partialAucFromCurve(scoreCurve(y, p, 'partialAuc'), maxFpr);
}
