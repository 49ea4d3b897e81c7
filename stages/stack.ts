/**
 * The stacked blend: a logistic regression on the logits of the base learners' out-of-fold
 * predictions. With `nonnegative`, blend weights are constrained to ≥ 0 (Breiman 1996, "Stacked
 * regressions"), so a learner can only help or be ignored, never be used upside down.
 * Passthrough inputs (e.g. row summaries of the features) enter standardized and unconstrained:
 * they are not learners, so a sign says nothing about a learner being used upside down.
 */
import { fitLogistic } from './core/newton-logistic.js';

/** Extra stack inputs besides the learners: standardized with the fit rows' mean and sd. */
export interface StackPassthrough {
  readonly names: string[];
  readonly means: number[];
  readonly sds: number[];
  readonly weights: number[];
}

export interface StackModel {
  readonly names: string[];
  readonly intercept: number;
  readonly weights: number[];
  readonly nonnegative: boolean;
  readonly converged: boolean;
  /** Absent in models made before passthrough existed: read as none. */
  readonly passthrough?: StackPassthrough;
}

/** Values of the passthrough columns, each indexed like the learners' predictions. */
export interface PassthroughValues {
  readonly names: readonly string[];
  readonly values: readonly Float64Array[];
}

/** A passthrough name that is not a numeric learner feature where the stack reads it. */
export class StackPassthroughConfigError extends Error {
  constructor(
    readonly column: string,
    readonly available: readonly string[],
  ) {
    super(`stack.passthrough: "${column}" is not a numeric learner feature; available: ${available.join(', ')}`);
    this.name = 'StackPassthroughConfigError';
  }
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

/** Fit on `rows` of the learners' predictions (each array indexed like `target`), plus optional passthrough columns. */
export function fitStack(
  names: readonly string[],
  preds: readonly Float64Array[],
  rows: Uint32Array,
  target: Uint8Array,
  opts: StackOptions,
  extra: PassthroughValues = { names: [], values: [] },
): StackModel {
  const means = extra.values.map((v) => meanAt(v, rows));
  const sds = extra.values.map((v, j) => sdAt(v, rows, means[j]));
  const X = [...logits(preds), ...extra.values.map((v, j) => standardized(v, means[j], sds[j]))];
  // Only learner weights are bounded: a passthrough sign is a direction, not a learner turned upside down.
  const lower = opts.nonnegative ? new Float64Array(X.length).fill(-Infinity).fill(0, 0, names.length) : undefined;
  const fit = fitLogistic(X, rows, target, { l2: opts.l2, lower, maxIter: 200, tol: 1e-10 });
  const coef = Array.from(fit.coef);
  return {
    names: names.slice(),
    intercept: fit.intercept,
    weights: coef.slice(0, names.length),
    nonnegative: opts.nonnegative,
    converged: fit.converged,
    passthrough: { names: extra.names.slice(), means, sds, weights: coef.slice(names.length) },
  };
}

/** Blend predictions for `rows` (arrays indexed like the fit's); `passthrough` in the model's passthrough order. */
export function applyStack(model: StackModel, preds: readonly Float64Array[], rows: Uint32Array, passthrough: readonly Float64Array[] = []): Float64Array {
  const pt = model.passthrough;
  const nPt = pt?.names.length ?? 0;
  if (passthrough.length !== nPt) throw new Error(`internal: the stack reads ${nPt} passthrough column(s), ${passthrough.length} given`);
  const out = new Float64Array(rows.length);
  for (let i = 0; i < rows.length; i++) {
    const r = rows[i];
    let z = model.intercept;
    for (let j = 0; j < preds.length; j++) z += model.weights[j] * logitClipped(preds[j][r]);
    if (pt) for (let j = 0; j < nPt; j++) z += (pt.weights[j] * (passthrough[j][r] - pt.means[j])) / pt.sds[j];
    out[i] = 1 / (1 + Math.exp(-z));
  }
  return out;
}

function meanAt(v: Float64Array, rows: Uint32Array): number {
  let s = 0;
  for (let i = 0; i < rows.length; i++) s += v[rows[i]];
  return s / rows.length;
}

/** Population sd; a constant column gets 1 so it standardizes to 0 instead of NaN. */
function sdAt(v: Float64Array, rows: Uint32Array, mean: number): number {
  let s = 0;
  for (let i = 0; i < rows.length; i++) s += (v[rows[i]] - mean) ** 2;
  const sd = Math.sqrt(s / rows.length);
  return sd > 0 && Number.isFinite(sd) ? sd : 1;
}

function standardized(v: Float64Array, mean: number, sd: number): Float64Array {
  const out = new Float64Array(v.length);
  for (let i = 0; i < v.length; i++) out[i] = (v[i] - mean) / sd;
  return out;
}
