/**
 * The metric set a run reports for one score vector: ranking (AUC, Gini, partial AUC, KS, AP),
 * the review-budget view (capture, precision, lift at the budget), probability quality (log
 * loss, Brier, calibration) and uncertainty (DeLong CI of the AUC; optional bootstrap CI of the
 * capture). The result is plain JSON.
 *
 * Degenerate inputs never throw and never produce NaN: a metric that is undefined for the data
 * is null. No rows: everything but n/events is null and the tables are empty. One class only:
 * every ranking metric, capture, lift, the CIs and the calibration fit are null; precision at the
 * budget is the (0 or 1) event rate; log loss, Brier and the calibration tables are reported.
 * Scores outside [0, 1] are rankings, not probabilities: log loss, Brier, ECE and the calibration
 * block are then null/empty. Wrong lengths, non-0/1 targets, NaN scores or a budget outside
 * (0, 1] are caller errors and throw MetricInputError.
 */
import type { Rng } from '../../stages/types.js';
import { aucFromCurve } from './auc.js';
import { averagePrecisionFromCurve } from './average-precision.js';
import { DEFAULT_REPLICATES, stratifiedCaptureCi } from './bootstrap.js';
import { budgetFromCurve } from './budget.js';
import { calibrationGlm, calibrationTable, expectedCalibrationError, type CalibrationTable } from './calibration.js';
import { scoreCurve } from './curve.js';
import { delongAuc } from './delong.js';
import { checkFraction } from './input.js';
import { ksFromCurve } from './ks.js';
import { brier, logLoss } from './logloss.js';
import { partialAucFromCurve } from './partial-auc.js';

export interface CalibrationBin {
  /** Bin index among the 10 (empty bins are left out). */
  readonly bin: number;
  readonly lower: number;
  readonly upper: number;
  readonly count: number;
  /** Observed event rate. */
  readonly prob_true: number;
  /** Mean predicted probability. */
  readonly prob_pred: number;
}

export interface BudgetPoint {
  readonly budget: number;
  readonly capture: number | null;
  readonly precision: number | null;
  readonly lift: number | null;
  /** Partial AUC over FPR in [0, budget], McClish-standardised. */
  readonly pauc: number | null;
  readonly pauc_raw: number | null;
  /** Share of non-events inside the budget. */
  readonly fpr_at_budget: number | null;
}

export interface MetricSet {
  readonly n: number;
  readonly events: number;
  readonly auc: number | null;
  readonly gini: number | null;
  /** Partial AUC over FPR in [0, budget], McClish-standardised (scikit-learn max_fpr). */
  readonly pauc: number | null;
  readonly pauc_raw: number | null;
  /** Tie-fractional capture, precision and lift in the top `budget` of rows. */
  readonly capture: number | null;
  readonly precision: number | null;
  readonly lift: number | null;
  /** Score of the row ranked ceil(budget * n): the decision threshold (flag score >= cut). */
  readonly cut: number | null;
  readonly fpr_at_budget: number | null;
  readonly ks: number | null;
  /** Flag score >= ks_threshold at the KS maximum. */
  readonly ks_threshold: number | null;
  readonly logloss: number | null;
  readonly brier: number | null;
  readonly ap: number | null;
  /** Count-weighted ECE over the 10 equal-width bins. */
  readonly ece: number | null;
  readonly calibration: {
    readonly slope: number | null;
    /** Calibration-in-the-large: intercept of glm(y ~ offset(logit p)). */
    readonly intercept: number | null;
    readonly bins: { readonly uniform: readonly CalibrationBin[]; readonly quantile: readonly CalibrationBin[] };
  };
  /** DeLong 95% CI of the AUC (needs >= 2 events and >= 2 non-events). */
  readonly auc_ci: readonly [number, number] | null;
  /** Stratified bootstrap 95% CI of the capture; present only when a bootstrap was run. */
  readonly capture_ci?: readonly [number, number] | null;
  readonly at: readonly BudgetPoint[];
}

export interface EvaluateOptions {
  /** Fraction of rows that can be reviewed, in (0, 1]. */
  readonly budget: number;
  /** Budgets for the `at` table; defaults to [budget]. */
  readonly budgets?: readonly number[];
  /** Needed for capture_ci. */
  readonly rng?: Rng;
  /** Bootstrap replicates for capture_ci; 0 skips it; defaults to 1,000 when an rng is given. */
  readonly bootstrap?: number;
}

export function evaluateScores(y: Uint8Array, p: Float64Array, opts: EvaluateOptions): MetricSet {
  checkFraction('evaluateScores', 'budget', opts.budget);
  const budgets = opts.budgets ?? [opts.budget];
  for (const b of budgets) checkFraction('evaluateScores', 'budgets[]', b);
  const c = scoreCurve(y, p, 'evaluateScores');
  const main = budgetFromCurve(c, opts.budget);
  const pa = partialAucFromCurve(c, opts.budget);
  const a = aucFromCurve(c);
  const ksr = ksFromCurve(c);
  const probs = c.n > 0 && isProbability(p);
  const uniform = probs ? calibrationTable(y, p, 'uniform') : null;
  const quantile = probs ? calibrationTable(y, p, 'quantile') : null;
  const fit = probs ? calibrationGlm(y, p) : null;

  const at = budgets.map((b): BudgetPoint => {
    const m = budgetFromCurve(c, b);
    const pb = partialAucFromCurve(c, b);
    return {
      budget: b,
      capture: m?.capture ?? null,
      precision: m?.precision ?? null,
      lift: m?.lift ?? null,
      pauc: pb?.mcclish ?? null,
      pauc_raw: pb?.raw ?? null,
      fpr_at_budget: m?.fprAtBudget ?? null,
    };
  });

  const set: MetricSet = {
    n: c.n,
    events: c.nPos,
    auc: a,
    gini: a === null ? null : 2 * a - 1,
    pauc: pa?.mcclish ?? null,
    pauc_raw: pa?.raw ?? null,
    capture: main?.capture ?? null,
    precision: main?.precision ?? null,
    lift: main?.lift ?? null,
    cut: finite(main?.cut),
    fpr_at_budget: main?.fprAtBudget ?? null,
    ks: ksr?.ks ?? null,
    ks_threshold: finite(ksr?.threshold),
    logloss: probs ? logLoss(y, p) : null,
    brier: probs ? brier(y, p) : null,
    ap: averagePrecisionFromCurve(c),
    ece: uniform ? expectedCalibrationError(uniform) : null,
    calibration: {
      slope: fit?.slope ?? null,
      intercept: fit?.inTheLarge ?? null,
      bins: { uniform: uniform ? bins(uniform) : [], quantile: quantile ? bins(quantile) : [] },
    },
    auc_ci: c.nPos >= 2 && c.nNeg >= 2 ? delongAuc(y, p).ci : null,
    at,
  };
  const replicates = opts.bootstrap ?? (opts.rng ? DEFAULT_REPLICATES : 0);
  if (replicates > 0 && opts.rng) {
    const ci = stratifiedCaptureCi(y, p, opts.budget, opts.rng, { replicates });
    return { ...set, capture_ci: ci ? [ci.low, ci.high] : null };
  }
  return set;
}

function isProbability(p: Float64Array): boolean {
  for (let i = 0; i < p.length; i++) if (!(p[i] >= 0 && p[i] <= 1)) return false;
  return true;
}

function finite(v: number | undefined): number | null {
  return v !== undefined && Number.isFinite(v) ? v : null;
}

function bins(t: CalibrationTable): CalibrationBin[] {
  const out: CalibrationBin[] = [];
  for (let k = 0; k < t.bin.length; k++) {
    const b = t.bin[k];
    out.push({ bin: b, lower: t.edges[b], upper: t.edges[b + 1], count: t.count[k], prob_true: t.probTrue[k], prob_pred: t.probPred[k] });
  }
  return out;
}
