/**
 * What a review budget buys: the top fraction b of rows by score. Rows tied with the cut make
 * "the top b" ambiguous, so the headline figures interpolate the gains curve linearly inside the
 * straddling tie block (the expected value under a random order within the block; independent
 * of row order). The inclusive variant takes the whole straddling block, which is what a
 * score threshold actually selects. Definitions follow oracle metric_lift_capture.json.
 */
import { scoreCurve, type ScoreCurve } from './curve.js';
import { checkFraction } from './input.js';

export interface InclusiveCut {
  /** Rows with score >= cut are selected: the score of the row ranked ceil(b*n). */
  readonly cut: number;
  readonly nSelected: number;
  readonly fraction: number;
  /** null without events. */
  readonly capture: number | null;
  readonly lift: number | null;
}

export interface BudgetMetrics {
  readonly budget: number;
  /** Share of all events that fall in the top b (tie-fractional); null without events. */
  readonly capture: number | null;
  /** Event rate within the top b (tie-fractional); 0 without events. */
  readonly precision: number;
  /** capture / b; null without events. */
  readonly lift: number | null;
  /** Share of non-events in the top b: the ROC operating point matching the budget; null without non-events. */
  readonly fprAtBudget: number | null;
  /** Trapezoid area under the gains curve on [0, b] (divide by b for mean capture); null without events. */
  readonly gainsArea: number | null;
  /** The score cut of the inclusive selection, used as the decision threshold. */
  readonly cut: number;
  readonly inclusive: InclusiveCut;
}

/** null when there are no rows. */
export function budgetFromCurve(c: ScoreCurve, budget: number): BudgetMetrics | null {
  checkFraction('budget', 'budget', budget);
  if (c.n === 0) return null;
  const n = c.n;
  // j: last gains point with rpp <= budget (the left end of numpy.interp's bracket).
  let j = 0;
  while (j < c.blocks && rpp(c, j + 1) <= budget) j++;
  const x0 = rpp(c, j);
  const capture = c.nPos > 0 ? interpolate(c, c.cumPos, c.nPos, j, budget) : null;
  const fprAtBudget = c.nNeg > 0 ? interpolate(c, c.cumNeg, c.nNeg, j, budget) : null;

  // Inclusive: the first whole block whose selected fraction reaches the budget (numpy
  // searchsorted 'left' on rpp). Comparing fractions, not ceil(b*n), avoids 0.07*100 = 7.000000000000001.
  const i = x0 === budget ? j : j + 1;
  const nSel = c.cumPos[i] + c.cumNeg[i];
  const fraction = nSel / n;
  const incCapture = c.nPos > 0 ? c.cumPos[i] / c.nPos : null;

  return {
    budget,
    capture,
    precision: capture === null ? 0 : (capture * c.nPos) / (budget * n),
    lift: capture === null ? null : capture / budget,
    fprAtBudget,
    gainsArea: c.nPos > 0 ? gainsArea(c, j, budget, capture as number) : null,
    cut: c.score[i - 1],
    inclusive: {
      cut: c.score[i - 1],
      nSelected: nSel,
      fraction,
      capture: incCapture,
      lift: incCapture === null ? null : incCapture / fraction,
    },
  };
}

export function budgetMetrics(y: Uint8Array, p: Float64Array, budget: number): BudgetMetrics | null {
  return budgetFromCurve(scoreCurve(y, p, 'budget'), budget);
}

function rpp(c: ScoreCurve, k: number): number {
  return (c.cumPos[k] + c.cumNeg[k]) / c.n;
}

/** cum/total at rpp = x, between gains points j and j+1, computed as numpy.interp does. */
function interpolate(c: ScoreCurve, cum: Float64Array, total: number, j: number, x: number): number {
  const f0 = cum[j] / total;
  if (j === c.blocks) return f0;
  const x0 = rpp(c, j);
  const slope = (cum[j + 1] / total - f0) / (rpp(c, j + 1) - x0);
  return slope * (x - x0) + f0;
}

function gainsArea(c: ScoreCurve, j: number, budget: number, captureAtBudget: number): number {
  let area = 0;
  for (let k = 1; k <= j; k++) {
    area += ((rpp(c, k) - rpp(c, k - 1)) * (c.cumPos[k - 1] / c.nPos + c.cumPos[k] / c.nPos)) / 2;
  }
  return area + ((budget - rpp(c, j)) * (c.cumPos[j] / c.nPos + captureAtBudget)) / 2;
}
