/**
 * Calibration: reliability tables (observed event rate against mean predicted probability per
 * bin, as scikit-learn 1.2 `calibration_curve`), the count-weighted expected calibration error,
 * and logistic recalibration (Cox 1958): slope from glm(y ~ logit p) and calibration-in-the-large
 * from glm(y ~ offset(logit p)), matching R's stats::glm(family = binomial) definitions.
 */
import { checkScores } from './input.js';
import { countBelow, linspace, quantileSorted } from './quantile.js';

export type BinStrategy = 'uniform' | 'quantile';

export interface CalibrationTable {
  readonly strategy: BinStrategy;
  /** nBins + 1 edges; bins are [e0, e1], (e1, e2], ..., (e_{k-1}, e_k]. */
  readonly edges: Float64Array;
  /** Index of each non-empty bin (empty bins are dropped, as scikit-learn does). */
  readonly bin: Uint32Array;
  readonly count: Float64Array;
  /** Observed event rate per non-empty bin. */
  readonly probTrue: Float64Array;
  /** Mean predicted probability per non-empty bin. */
  readonly probPred: Float64Array;
}

/**
 * Edges: numpy.linspace(0, 1, nBins + 1) (uniform) or numpy.percentile(p, linspace(0, 100, nBins + 1))
 * (quantile). A row's bin is searchsorted(inner edges, p, 'left') — the scikit-learn 1.2 rule;
 * later releases changed it at edges.
 */
export function calibrationTable(y: Uint8Array, p: Float64Array, strategy: BinStrategy, nBins = 10): CalibrationTable {
  checkScores('calibrationTable', y, p);
  const n = y.length;
  let edges: Float64Array;
  if (strategy === 'uniform') {
    edges = linspace(0, 1, nBins + 1);
  } else {
    edges = new Float64Array(nBins + 1);
    if (n > 0) {
      const sorted = Float64Array.from(p).sort();
      const pct = linspace(0, 100, nBins + 1);
      for (let i = 0; i <= nBins; i++) edges[i] = quantileSorted(sorted, pct[i] / 100);
    }
  }
  const inner = edges.subarray(1, nBins);
  const cnt = new Float64Array(nBins);
  const sumY = new Float64Array(nBins);
  const sumP = new Float64Array(nBins);
  for (let i = 0; i < n; i++) {
    const b = countBelow(inner, p[i]);
    cnt[b]++;
    sumY[b] += y[i];
    sumP[b] += p[i];
  }
  let used = 0;
  for (let b = 0; b < nBins; b++) if (cnt[b] > 0) used++;
  const bin = new Uint32Array(used);
  const count = new Float64Array(used);
  const probTrue = new Float64Array(used);
  const probPred = new Float64Array(used);
  for (let b = 0, k = 0; b < nBins; b++) {
    if (cnt[b] === 0) continue;
    bin[k] = b;
    count[k] = cnt[b];
    probTrue[k] = sumY[b] / cnt[b];
    probPred[k] = sumP[b] / cnt[b];
    k++;
  }
  return { strategy, edges, bin, count, probTrue, probPred };
}

/** sum_b n_b |observed_b - predicted_b| / n; null for an empty table. */
export function expectedCalibrationError(t: CalibrationTable): number | null {
  let total = 0;
  let sum = 0;
  for (let k = 0; k < t.count.length; k++) {
    total += t.count[k];
    sum += t.count[k] * Math.abs(t.probTrue[k] - t.probPred[k]);
  }
  return total > 0 ? sum / total : null;
}

export interface CalibrationFit {
  /** b in glm(y ~ a + b logit p): 1 = well spread, < 1 = predictions too extreme. */
  readonly slope: number;
  /** a in the same fit. */
  readonly interceptWithSlope: number;
  /** a in glm(y ~ a + offset(logit p)): 0 = right on average, < 0 = over-predicting. */
  readonly inTheLarge: number;
}

/**
 * p is clipped to [1e-15, 1 - 1e-15] before the logit so a hard 0/1 prediction stays finite.
 * null when the fits have no finite optimum (one class only, separation) or do not converge.
 */
export function calibrationGlm(y: Uint8Array, p: Float64Array): CalibrationFit | null {
  const events = checkScores('calibrationGlm', y, p);
  const n = y.length;
  if (events === 0 || events === n) return null;
  const x = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const q = Math.min(Math.max(p[i], LOGIT_CLIP), 1 - LOGIT_CLIP);
    x[i] = Math.log(q / (1 - q));
  }
  const full = newtonLogistic(y, x, true);
  const offset = newtonLogistic(y, x, false);
  if (full === null || offset === null) return null;
  return { slope: full[1], interceptWithSlope: full[0], inTheLarge: offset[0] };
}

const LOGIT_CLIP = 1e-15;
const MAX_ITER = 100;
const MAX_HALVINGS = 30;
/** Relative size of rounding noise in a log-likelihood summed over many rows. */
const ROUNDING = 1e-12;

/** Log-likelihood, gradient and Hessian at one point: [ll, g0, g1, h00, h01, h11]. */
type Stats = Float64Array;

/**
 * Maximises sum y eta - log(1 + e^eta) with eta = a + b x (withSlope) or eta = a + x (x as an
 * offset). Newton steps with step halving on a log-likelihood decrease; converged when a full
 * Newton step is below 1e-10 relative (quadratic convergence puts the result well inside that).
 * Kept private and two-parameter on purpose: the general solver lives in stages/core.
 */
function newtonLogistic(y: Uint8Array, x: Float64Array, withSlope: boolean): [number, number] | null {
  let a = 0;
  let b = 1;
  let cur: Stats = new Float64Array(6);
  let trial: Stats = new Float64Array(6);
  evaluate(y, x, a, b, cur);
  for (let iter = 0; iter < MAX_ITER; iter++) {
    const [, g0, g1, h00, h01, h11] = cur;
    let da: number;
    let db = 0;
    if (withSlope) {
      const det = h00 * h11 - h01 * h01;
      if (!(det > 0)) return null;
      da = (h11 * g0 - h01 * g1) / det;
      db = (h00 * g1 - h01 * g0) / det;
    } else {
      if (!(h00 > 0)) return null;
      da = g0 / h00;
    }
    if (Math.abs(da) <= 1e-10 * (1 + Math.abs(a)) && Math.abs(db) <= 1e-10 * (1 + Math.abs(b))) {
      return [a + da, b + db];
    }
    // Near the optimum a sum of n log-likelihood terms moves by less than its own rounding error,
    // so a step that loses no more than that counts as no loss (else a converging fit would halve
    // to nothing and be reported as a failure).
    const floor = cur[0] - ROUNDING * Math.max(1, Math.abs(cur[0]));
    let step = 1;
    evaluate(y, x, a + da, b + db, trial);
    for (let h = 0; h < MAX_HALVINGS && !(trial[0] >= floor); h++) {
      step /= 2;
      evaluate(y, x, a + step * da, b + step * db, trial);
    }
    if (!(trial[0] >= floor)) return null;
    a += step * da;
    b += step * db;
    [cur, trial] = [trial, cur];
  }
  return null;
}

/** One pass: one exp and one log1p per row, stable for large |eta|. */
function evaluate(y: Uint8Array, x: Float64Array, a: number, b: number, out: Stats): void {
  let ll = 0;
  let g0 = 0;
  let g1 = 0;
  let h00 = 0;
  let h01 = 0;
  let h11 = 0;
  for (let i = 0; i < y.length; i++) {
    const xi = x[i];
    const eta = a + b * xi;
    const e = Math.exp(-Math.abs(eta));
    const mu = eta >= 0 ? 1 / (1 + e) : e / (1 + e);
    ll += y[i] * eta - (Math.max(eta, 0) + Math.log1p(e));
    const r = y[i] - mu;
    const w = mu * (1 - mu);
    g0 += r;
    g1 += r * xi;
    h00 += w;
    h01 += w * xi;
    h11 += w * xi * xi;
  }
  out[0] = ll;
  out[1] = g0;
  out[2] = g1;
  out[3] = h00;
  out[4] = h01;
  out[5] = h11;
}
