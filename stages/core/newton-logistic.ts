/**
 * Penalized (optionally weighted, offset and lower-bounded) binary logistic regression by Newton's
 * method on the full Hessian. Used by the `logistic` learner and by the stacked blend, which needs
 * non-negative weights (Breiman 1996, "Stacked regressions", Machine Learning 24:49-64).
 *
 * Objective, minimized over the intercept b and coefficients β:
 *   f(b, β) = Σ_i w_i · [ln(1 + e^{η_i}) − y_i η_i] + (l2/2)·‖β‖²,  η_i = b + offset_i + Σ_j β_j x_ij
 * The intercept is never penalized, so l2 = 1/C of a summed-loss formulation.
 *
 * Bounds β_j ≥ lower_j use the two-metric projected Newton method (Bertsekas 1982, "Projected Newton
 * methods for optimization problems with simple constraints", SIAM J. Control Optim. 20(2):221-246):
 * coefficients within ε of their bound whose gradient pushes outward are held on a diagonal step,
 * the rest take a Newton step, and the trial point is projected onto the bounds, with step halving
 * until the objective decreases enough (Armijo).
 *
 * Failure to converge (separable data with l2 = 0, iteration limit, singular Hessian) is reported in
 * the result (`converged: false`, `status`, `message`), never thrown: a caller fitting many folds
 * wants the number and the warning, not an aborted run. Bad inputs are thrown as LogisticInputError.
 */
import { withKernelArena, type KernelArena } from './kernel/arena.js';
import { gramBlock } from './kernel/gram.js';

export interface LogisticFitOptions {
  /** Ridge penalty (l2/2)·‖β‖² on the coefficients; the intercept is never penalized. */
  l2: number;
  /** Per-row weights over the same index space as the columns (read at `rows`). */
  weights?: Float64Array;
  /** Newton iterations at most (default 100). */
  maxIter?: number;
  /** Converged when the largest absolute Newton step is ≤ tol·(1 + largest |parameter|) (default 1e-10). */
  tol?: number;
  /** Per-coefficient lower bounds (length = number of columns); -Infinity = free. */
  lower?: Float64Array;
  /** Fixed addition to the linear predictor per row, over the same index space (read at `rows`). */
  offset?: Float64Array;
}

export type LogisticStatus = 'converged' | 'max_iter' | 'stalled';

export interface LogisticFit {
  intercept: number;
  coef: Float64Array;
  /** Newton iterations taken. */
  iterations: number;
  converged: boolean;
  /** Objective f at the returned parameters. */
  objective: number;
  /** Why the iteration stopped. */
  status: LogisticStatus;
  /** Human-readable account of the stop, naming the likely cause when not converged. */
  message: string;
  /** Largest absolute parameter change proposed by the last Newton step. */
  lastStep: number;
}

/** A caller passed inputs the solver cannot use; `field` names the offending option or array. */
export class LogisticInputError extends Error {
  constructor(
    message: string,
    readonly field: string,
    readonly index?: number,
  ) {
    super(message);
    this.name = 'LogisticInputError';
  }
}

const DEFAULT_MAX_ITER = 100;
const DEFAULT_TOL = 1e-10;
/** Armijo sufficient-decrease fraction; the usual textbook value (common practice, no source). */
const ARMIJO = 1e-4;
const MAX_HALVINGS = 60;
/** Upper bound on Bertsekas's ε for the active set. */
const ACTIVE_EPS = 1e-6;
/**
 * Objective differences below this fraction of |f| are rounding noise: a sum of n log-losses
 * carries relative error of many ulps, so a genuinely tiny Newton step can appear not to decrease f.
 */
const ROUNDING = 1e-12;

/** ln(1 + e^x) without overflow for large x or loss of precision for very negative x. */
export function log1pExp(x: number): number {
  return x > 0 ? x + Math.log1p(Math.exp(-x)) : Math.log1p(Math.exp(x));
}

/** 1 / (1 + e^{-x}) without overflow in either tail. */
export function sigmoid(x: number): number {
  if (x >= 0) return 1 / (1 + Math.exp(-x));
  const e = Math.exp(x);
  return e / (1 + e);
}

export function fitLogistic(
  X: readonly Float64Array[],
  rows: Uint32Array,
  y: Uint8Array,
  opts: LogisticFitOptions,
): LogisticFit {
  const d = X.length + 1;
  // the Hessian's row blocks and the Hessian itself, for the Gram kernel (kernel/gram.ts)
  return withKernelArena(8 * (2 * d * ROW_BLOCK + d * d) + 64, (arena) => fitLogisticIn(X, rows, y, opts, arena));
}

function fitLogisticIn(
  X: readonly Float64Array[],
  rows: Uint32Array,
  y: Uint8Array,
  opts: LogisticFitOptions,
  arena: KernelArena | null,
): LogisticFit {
  const p = X.length;
  const d = p + 1;
  const n = rows.length;
  const maxIter = opts.maxIter ?? DEFAULT_MAX_ITER;
  const tol = opts.tol ?? DEFAULT_TOL;
  const l2 = opts.l2;
  validate(X, rows, y, opts, maxIter, tol);

  const lower = new Float64Array(p).fill(-Infinity);
  if (opts.lower) lower.set(opts.lower);

  const w = new Float64Array(n);
  let wSum = 0;
  let wPos = 0;
  for (let i = 0; i < n; i++) {
    const wi = opts.weights ? opts.weights[rows[i]] : 1;
    w[i] = wi;
    wSum += wi;
    if (y[rows[i]] === 1) wPos += wi;
  }

  const theta = new Float64Array(d);
  // Starting at the logit of the (weighted) base rate makes the first Newton step small for the
  // intercept; with all rows in one class there is no finite rate to start from.
  if (wPos > 0 && wPos < wSum) theta[0] = Math.log(wPos / (wSum - wPos));
  for (let j = 0; j < p; j++) theta[j + 1] = Math.max(0, lower[j]);

  const ws: Workspace = {
    X,
    rows,
    y,
    w,
    offset: opts.offset,
    l2,
    eta: new Float64Array(n),
    etaTry: new Float64Array(n),
    s: new Float64Array(n),
    resid: new Float64Array(n),
    blockZ: arena?.f64(d * ROW_BLOCK) ?? new Float64Array(d * ROW_BLOCK),
    blockSZ: arena?.f64(d * ROW_BLOCK) ?? new Float64Array(d * ROW_BLOCK),
  };
  const H = arena?.f64(d * d) ?? new Float64Array(d * d);
  const L = new Float64Array(d * d);
  const g = new Float64Array(d);
  const dir = new Float64Array(d);
  const thetaTry = new Float64Array(d);
  const freeIdx = new Int32Array(d);
  const rhs = new Float64Array(d);

  linearPredictor(ws, theta, ws.eta);
  let f = objective(ws, theta, ws.eta);
  let status: LogisticStatus = 'max_iter';
  let message = '';
  let lastStep = NaN;
  let iterations = 0;
  let damped = false;

  for (let iter = 0; iter < maxIter; iter++) {
    derivatives(ws, theta, g, H, d);

    // Bertsekas's ε shrinks with the projected gradient so that near a solution only coefficients
    // truly at their bound are held there.
    let pgMax = 0;
    for (let a = 0; a < d; a++) {
      const lo = a === 0 ? -Infinity : lower[a - 1];
      const pg = theta[a] - Math.max(lo, theta[a] - g[a]);
      if (Math.abs(pg) > pgMax) pgMax = Math.abs(pg);
    }
    const eps = Math.min(ACTIVE_EPS, pgMax);

    let m = 0;
    for (let a = 0; a < d; a++) {
      const lo = a === 0 ? -Infinity : lower[a - 1];
      const held = lo > -Infinity && theta[a] <= lo + eps && g[a] > 0;
      if (held) dir[a] = -g[a] / (H[a * d + a] > 0 ? H[a * d + a] : 1);
      else freeIdx[m++] = a;
    }
    for (let u = 0; u < m; u++) {
      const a = freeIdx[u];
      for (let v = 0; v <= u; v++) L[u * m + v] = H[a * d + freeIdx[v]];
    }
    damped = !cholesky(L, m);
    if (damped && !dampedCholesky(L, H, freeIdx, m, d)) {
      status = 'stalled';
      message = 'the Hessian could not be factorized even with damping (non-finite values?)';
      break;
    }
    for (let u = 0; u < m; u++) rhs[u] = -g[freeIdx[u]];
    choleskySolve(L, m, rhs);
    for (let u = 0; u < m; u++) dir[freeIdx[u]] = rhs[u];

    let thetaScale = 0;
    for (let a = 0; a < d; a++) thetaScale = Math.max(thetaScale, Math.abs(theta[a]));
    project(theta, dir, 1, lower, thetaTry);
    lastStep = 0;
    for (let a = 0; a < d; a++) lastStep = Math.max(lastStep, Math.abs(thetaTry[a] - theta[a]));
    iterations = iter + 1;

    // A step this small after an undamped factorization means the quadratic model is exact to
    // working precision; a damped one (singular Hessian) proves nothing about optimality.
    if (!damped && lastStep <= tol * (1 + thetaScale)) {
      linearPredictor(ws, thetaTry, ws.etaTry);
      const fTry = objective(ws, thetaTry, ws.etaTry);
      if (fTry <= f + ROUNDING * Math.max(1, Math.abs(f))) {
        theta.set(thetaTry);
        f = fTry;
      }
      status = 'converged';
      break;
    }

    if (lastStep === 0) {
      status = 'stalled';
      message = 'the Newton step vanished on a singular Hessian (probabilities saturated or collinear columns)';
      break;
    }

    let accepted = false;
    let alpha = 1;
    for (let h = 0; h <= MAX_HALVINGS; h++, alpha /= 2) {
      if (h > 0) project(theta, dir, alpha, lower, thetaTry);
      linearPredictor(ws, thetaTry, ws.etaTry);
      const fTry = objective(ws, thetaTry, ws.etaTry);
      let predicted = 0;
      for (let a = 0; a < d; a++) predicted += g[a] * (thetaTry[a] - theta[a]);
      const noise = ROUNDING * Math.max(1, Math.abs(f));
      const sufficient = fTry <= f + ARMIJO * predicted;
      const withinNoise = -predicted <= noise && fTry <= f + noise;
      if (sufficient || withinNoise) {
        theta.set(thetaTry);
        const swap = ws.eta;
        ws.eta = ws.etaTry;
        ws.etaTry = swap;
        f = fTry;
        accepted = true;
        break;
      }
    }
    if (!accepted) {
      status = 'stalled';
      message = `no step along the Newton direction decreased the objective (last step ${lastStep.toExponential(2)})`;
      break;
    }
  }

  if (status === 'converged') {
    message = `converged in ${iterations} iterations (last step ${lastStep.toExponential(2)} ≤ tol ${tol})`;
  } else if (status === 'max_iter') {
    const hint =
      l2 === 0
        ? '; with l2 = 0 the classes may be separable (no finite optimum): use l2 > 0'
        : damped
          ? '; the Hessian was singular (collinear or constant columns)'
          : '';
    message = `did not converge in ${maxIter} iterations (last step ${lastStep.toExponential(2)}, tol ${tol})${hint}`;
  }

  return {
    intercept: theta[0],
    coef: theta.slice(1),
    iterations,
    converged: status === 'converged',
    objective: f,
    status,
    message,
    lastStep,
  };
}

interface Workspace {
  readonly X: readonly Float64Array[];
  readonly rows: Uint32Array;
  readonly y: Uint8Array;
  /** Row weights in `rows` order. */
  readonly w: Float64Array;
  readonly offset: Float64Array | undefined;
  readonly l2: number;
  eta: Float64Array;
  etaTry: Float64Array;
  /** w·p·(1−p) per row: the Hessian weights. */
  readonly s: Float64Array;
  /** w·(p − y) per row: the gradient weights. */
  readonly resid: Float64Array;
  /** Scratch: one row block's design columns, and the same times s (d × ROW_BLOCK each). */
  readonly blockZ: Float64Array;
  readonly blockSZ: Float64Array;
}

function linearPredictor(ws: Workspace, theta: Float64Array, out: Float64Array): void {
  const { X, rows, offset } = ws;
  const n = rows.length;
  if (offset) for (let i = 0; i < n; i++) out[i] = theta[0] + offset[rows[i]];
  else out.fill(theta[0]);
  for (let j = 0; j < X.length; j++) {
    const b = theta[j + 1];
    if (b === 0) continue;
    const xj = X[j];
    for (let i = 0; i < n; i++) out[i] += b * xj[rows[i]];
  }
}

function objective(ws: Workspace, theta: Float64Array, eta: Float64Array): number {
  const { rows, y, w } = ws;
  let loss = 0;
  for (let i = 0; i < rows.length; i++) {
    const e = eta[i];
    loss += w[i] * (y[rows[i]] === 1 ? log1pExp(-e) : log1pExp(e));
  }
  let pen = 0;
  for (let a = 1; a < theta.length; a++) pen += theta[a] * theta[a];
  return loss + 0.5 * ws.l2 * pen;
}

/**
 * Rows per block of the Hessian pass: a block's (p + 1) × ROW_BLOCK gathered values stay in
 * cache while every pair of columns is multiplied over them. Streaming all n rows once per pair
 * instead moved gigabytes per iteration for wide inputs and left the CPU waiting on memory.
 */
/** Even, so an odd last block has room for gramBlock's zero padding row. */
const ROW_BLOCK = 256;

/** Gradient g and the full Hessian H (row-major d×d, both triangles) at `theta`, whose η is ws.eta. */
function derivatives(ws: Workspace, theta: Float64Array, g: Float64Array, H: Float64Array, d: number): void {
  const { X, rows, y, w, eta, s, resid, l2 } = ws;
  const n = rows.length;
  for (let i = 0; i < n; i++) {
    // p and 1 − p are computed separately so neither loses precision when the other is near 1.
    const x = eta[i];
    let pr: number;
    let qr: number;
    if (x >= 0) {
      const e = Math.exp(-x);
      pr = 1 / (1 + e);
      qr = e / (1 + e);
    } else {
      const e = Math.exp(x);
      pr = e / (1 + e);
      qr = 1 / (1 + e);
    }
    resid[i] = w[i] * (y[rows[i]] === 1 ? -qr : pr);
    s[i] = w[i] * pr * qr;
  }
  g.fill(0);
  H.fill(0);
  // Z holds the block's design columns (column 0 = the intercept's ones); SZ the same times s.
  const Z = ws.blockZ;
  const SZ = ws.blockSZ;
  const B = ROW_BLOCK;
  for (let i0 = 0; i0 < n; i0 += B) {
    const m = Math.min(B, n - i0);
    for (let t = 0; t < m; t++) {
      Z[t] = 1;
      SZ[t] = s[i0 + t];
    }
    let g0 = 0;
    for (let t = 0; t < m; t++) g0 += resid[i0 + t];
    g[0] += g0;
    for (let j = 0; j < X.length; j++) {
      const xj = X[j];
      const at = (j + 1) * B;
      let gj = 0;
      for (let t = 0; t < m; t++) {
        const i = i0 + t;
        const v = xj[rows[i]];
        Z[at + t] = v;
        SZ[at + t] = s[i] * v;
        gj += resid[i] * v;
      }
      g[j + 1] += gj;
    }
    gramBlock(Z, SZ, H, d, B, m);
  }
  for (let a = 1; a < d; a++) {
    g[a] += l2 * theta[a];
    H[a * d + a] += l2;
  }
  for (let a = 0; a < d; a++) for (let k = 0; k < a; k++) H[k * d + a] = H[a * d + k];
}

/** out = max(lower, theta + alpha·dir) per coefficient; the intercept is unbounded. */
function project(theta: Float64Array, dir: Float64Array, alpha: number, lower: Float64Array, out: Float64Array): void {
  out[0] = theta[0] + alpha * dir[0];
  for (let a = 1; a < theta.length; a++) out[a] = Math.max(lower[a - 1], theta[a] + alpha * dir[a]);
}

/**
 * In-place Cholesky of the lower triangle of the m×m row-major matrix A = L·Lᵀ. False when a pivot
 * is not clearly positive relative to the largest diagonal entry (singular or indefinite to
 * working precision).
 */
function cholesky(A: Float64Array, m: number): boolean {
  let maxDiag = 0;
  for (let u = 0; u < m; u++) maxDiag = Math.max(maxDiag, Math.abs(A[u * m + u]));
  const floor = maxDiag * 1e-13;
  for (let u = 0; u < m; u++) {
    for (let v = 0; v <= u; v++) {
      let sum = A[u * m + v];
      for (let k = 0; k < v; k++) sum -= A[u * m + k] * A[v * m + k];
      if (u === v) {
        if (!(sum > floor)) return false;
        A[u * m + u] = Math.sqrt(sum);
      } else {
        A[u * m + v] = sum / A[v * m + v];
      }
    }
  }
  return true;
}

/**
 * Levenberg-style fallback: add a growing multiple of the identity to the free-set Hessian until
 * it factorizes. The step is then a shortened gradient-like step, still a descent direction.
 */
function dampedCholesky(L: Float64Array, H: Float64Array, freeIdx: Int32Array, m: number, d: number): boolean {
  let maxDiag = 0;
  for (let u = 0; u < m; u++) maxDiag = Math.max(maxDiag, Math.abs(H[freeIdx[u] * d + freeIdx[u]]));
  let mu = 1e-10 * Math.max(1, maxDiag);
  for (let attempt = 0; attempt < 30; attempt++, mu *= 100) {
    for (let u = 0; u < m; u++) {
      const a = freeIdx[u];
      for (let v = 0; v <= u; v++) L[u * m + v] = H[a * d + freeIdx[v]];
      L[u * m + u] += mu;
    }
    if (cholesky(L, m)) return true;
  }
  return false;
}

/** Solves (L·Lᵀ)·x = b in place, L the lower triangle from `cholesky`. */
function choleskySolve(L: Float64Array, m: number, b: Float64Array): void {
  for (let u = 0; u < m; u++) {
    let sum = b[u];
    for (let k = 0; k < u; k++) sum -= L[u * m + k] * b[k];
    b[u] = sum / L[u * m + u];
  }
  for (let u = m - 1; u >= 0; u--) {
    let sum = b[u];
    for (let k = u + 1; k < m; k++) sum -= L[k * m + u] * b[k];
    b[u] = sum / L[u * m + u];
  }
}

function validate(
  X: readonly Float64Array[],
  rows: Uint32Array,
  y: Uint8Array,
  opts: LogisticFitOptions,
  maxIter: number,
  tol: number,
): void {
  if (!(Number.isFinite(opts.l2) && opts.l2 >= 0)) throw new LogisticInputError(`l2 must be a finite number ≥ 0, got ${opts.l2}`, 'l2');
  if (!(Number.isInteger(maxIter) && maxIter >= 0)) throw new LogisticInputError(`maxIter must be an integer ≥ 0, got ${maxIter}`, 'maxIter');
  if (!(Number.isFinite(tol) && tol > 0)) throw new LogisticInputError(`tol must be a finite number > 0, got ${tol}`, 'tol');
  if (rows.length === 0) throw new LogisticInputError('no rows to fit', 'rows');
  const space = y.length;
  for (let i = 0; i < rows.length; i++) {
    const r = rows[i];
    if (r >= space) throw new LogisticInputError(`row index ${r} is outside the target's ${space} entries`, 'rows', i);
    if (y[r] > 1) throw new LogisticInputError(`target at row ${r} is ${y[r]}, expected 0 or 1`, 'y', r);
  }
  const finiteAtRows = (arr: Float64Array, field: string, index?: number): void => {
    if (arr.length !== space) throw new LogisticInputError(`${field} has ${arr.length} entries, the target has ${space}`, field, index);
    for (let i = 0; i < rows.length; i++) {
      if (!Number.isFinite(arr[rows[i]])) throw new LogisticInputError(`${field} is not finite at row ${rows[i]}`, field, index ?? rows[i]);
    }
  };
  X.forEach((col, j) => finiteAtRows(col, `X[${j}]`, j));
  if (opts.offset) finiteAtRows(opts.offset, 'offset');
  if (opts.weights) {
    finiteAtRows(opts.weights, 'weights');
    for (let i = 0; i < rows.length; i++) {
      if (opts.weights[rows[i]] < 0) throw new LogisticInputError(`weight at row ${rows[i]} is negative`, 'weights', rows[i]);
    }
  }
  if (opts.lower) {
    if (opts.lower.length !== X.length) throw new LogisticInputError(`lower has ${opts.lower.length} entries for ${X.length} columns`, 'lower');
    for (let j = 0; j < X.length; j++) {
      const lo = opts.lower[j];
      if (Number.isNaN(lo) || lo === Infinity) throw new LogisticInputError(`lower[${j}] must be a number or -Infinity, got ${lo}`, 'lower', j);
    }
  }
}
