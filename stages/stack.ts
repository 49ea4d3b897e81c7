/**
 * The stacked blend: a logistic regression on the logits of the base learners' out-of-fold
 * predictions. With `nonnegative`, blend weights are constrained to ≥ 0 (Breiman 1996, "Stacked
 * regressions"), so a learner can only help or be ignored, never be used upside down.
 */
import { fitLogistic } from './core/newton-logistic.js';

export interface StackModel {
  readonly names: string[];
  readonly intercept: number;
  readonly weights: number[];
  readonly nonnegative: boolean;
  readonly converged: boolean;
}

export interface StackOptions {
  readonly nonnegative: boolean;
  /** Ridge penalty on the weights (l2/2·‖w‖² on the summed log loss), as in the logistic learner. */
  readonly l2: number;
}

/** Probabilities are clipped before the logit so a confident learner cannot produce an infinite input. */
const CLIP = 1e-6;

export function logitClipped(p: number): number {
  const q = p < CLIP ? CLIP : p > 1 - CLIP ? 1 - CLIP : p;
  return Math.log(q / (1 - q));
}

function logits(preds: readonly Float64Array[]): Float64Array[] {
  return preds.map((p) => {
    const z = new Float64Array(p.length);
    for (let i = 0; i < p.length; i++) z[i] = logitClipped(p[i]);
    return z;
  });
}

/** Fit on `rows` of the learners' predictions (each array indexed like `target`). */
export function fitStack(names: readonly string[], preds: readonly Float64Array[], rows: Uint32Array, target: Uint8Array, opts: StackOptions): StackModel {
  const X = logits(preds);
  const lower = opts.nonnegative ? new Float64Array(names.length) : undefined;
  const fit = fitLogistic(X, rows, target, { l2: opts.l2, lower, maxIter: 200, tol: 1e-10 });
  return { names: names.slice(), intercept: fit.intercept, weights: Array.from(fit.coef), nonnegative: opts.nonnegative, converged: fit.converged };
}

/** Blend predictions for `rows` (arrays indexed like the fit's). */
export function applyStack(model: StackModel, preds: readonly Float64Array[], rows: Uint32Array): Float64Array {
  const out = new Float64Array(rows.length);
  for (let i = 0; i < rows.length; i++) {
    let z = model.intercept;
    for (let j = 0; j < preds.length; j++) z += model.weights[j] * logitClipped(preds[j][rows[i]]);
    out[i] = 1 / (1 + Math.exp(-z));
  }
  return out;
}
