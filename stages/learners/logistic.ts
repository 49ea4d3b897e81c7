/**
 * The `logistic` learner: ridge-penalized logistic regression on internally standardized columns.
 * Standardizing (mean and population sd over the fit rows) makes one l2 value mean the same
 * shrinkage for every column whatever its units, and keeps the Newton system well scaled.
 * The fitted model is plain JSON so the scoring bundle can store it as is.
 */
import { fitLogistic, LogisticInputError, sigmoid } from '../core/newton-logistic.js';
import type { Learner, LearnerFitInput } from '../types.js';

export interface LogisticConfig {
  /** Ridge penalty on the summed log-loss, standardized scale (= 1/C of a summed-loss formulation). */
  readonly l2: number;
  readonly max_iter: number;
  readonly tol: number;
}

export interface LogisticModel {
  readonly names: readonly string[];
  readonly means: readonly number[];
  /** Population sd (ddof = 0) over the fit rows; 1 for a column constant there. */
  readonly sds: readonly number[];
  readonly intercept: number;
  /** Per standardized column; exactly 0 for a column constant over the fit rows. */
  readonly coef: readonly number[];
  readonly converged: boolean;
  readonly iterations: number;
}

/** A config value of the wrong type or range; `key` names it. */
export class LogisticConfigError extends Error {
  constructor(
    message: string,
    readonly key: string,
    readonly value: unknown,
  ) {
    super(message);
    this.name = 'LogisticConfigError';
  }
}

const DEFAULTS: LogisticConfig = { l2: 1.0, max_iter: 100, tol: 1e-10 };

export const logistic: Learner<LogisticConfig, LogisticModel> = {
  kind: 'logistic',
  version: 1,

  resolveConfig(raw: unknown): LogisticConfig {
    if (raw === undefined || raw === null) return DEFAULTS;
    if (typeof raw !== 'object' || Array.isArray(raw)) {
      throw new LogisticConfigError(`logistic: config must be a mapping, got ${JSON.stringify(raw)}`, '', raw);
    }
    const r = raw as Record<string, unknown>;
    for (const key of Object.keys(r)) {
      if (!(key in DEFAULTS)) {
        throw new LogisticConfigError(`logistic: unknown option '${key}' (known: ${Object.keys(DEFAULTS).join(', ')})`, key, r[key]);
      }
    }
    const l2 = numberOption(r, 'l2', (v) => v >= 0, 'a finite number ≥ 0');
    const maxIter = numberOption(r, 'max_iter', (v) => Number.isInteger(v) && v >= 1, 'an integer ≥ 1');
    const tol = numberOption(r, 'tol', (v) => v > 0, 'a finite number > 0');
    return { l2, max_iter: maxIter, tol };
  },

  fit({ features, names, rows, target, config }: LearnerFitInput<LogisticConfig>): LogisticModel {
    if (features.length !== names.length) {
      throw new LogisticInputError(`logistic: ${features.length} feature columns but ${names.length} names`, 'features');
    }
    const n = rows.length;
    const means: number[] = [];
    const sds: number[] = [];
    // Columns constant over the fit rows carry no information and would make the unpenalized
    // Hessian singular, so they stay out of the solver and keep coefficient 0.
    const varying: number[] = [];
    const standardized: Float64Array[] = [];
    for (let j = 0; j < features.length; j++) {
      const x = features[j];
      let sum = 0;
      let lo = Infinity;
      let hi = -Infinity;
      for (let i = 0; i < n; i++) {
        const v = x[rows[i]];
        sum += v;
        if (v < lo) lo = v;
        if (v > hi) hi = v;
      }
      const mean = n > 0 ? sum / n : 0;
      means.push(mean);
      if (!(hi > lo)) {
        sds.push(1);
        continue;
      }
      let ss = 0;
      for (let i = 0; i < n; i++) {
        const dv = x[rows[i]] - mean;
        ss += dv * dv;
      }
      const sd = Math.sqrt(ss / n);
      sds.push(sd);
      const z = new Float64Array(n);
      for (let i = 0; i < n; i++) z[i] = (x[rows[i]] - mean) / sd;
      varying.push(j);
      standardized.push(z);
    }

    // The standardized columns are compact (position i holds row rows[i]), so the target is too.
    const y = new Uint8Array(n);
    for (let i = 0; i < n; i++) y[i] = target[rows[i]];
    const local = new Uint32Array(n);
    for (let i = 0; i < n; i++) local[i] = i;

    const fit = fitLogistic(standardized, local, y, { l2: config.l2, maxIter: config.max_iter, tol: config.tol });
    const coef = new Array<number>(features.length).fill(0);
    varying.forEach((j, k) => {
      coef[j] = fit.coef[k];
    });
    return {
      names: [...names],
      means,
      sds,
      intercept: fit.intercept,
      coef,
      converged: fit.converged,
      iterations: fit.iterations,
    };
  },

  predict(model: LogisticModel, features: readonly Float64Array[], rows: Uint32Array): Float64Array {
    checkWidth(model, features);
    const eta = new Float64Array(rows.length).fill(model.intercept);
    for (let j = 0; j < features.length; j++) {
      const b = model.coef[j];
      if (b === 0) continue;
      const x = features[j];
      const mean = model.means[j];
      const sd = model.sds[j];
      for (let i = 0; i < rows.length; i++) eta[i] += b * ((x[rows[i]] - mean) / sd);
    }
    for (let i = 0; i < eta.length; i++) eta[i] = sigmoid(eta[i]);
    return eta;
  },
};

/**
 * Each feature's term coef_j · z_j in the linear predictor of one row (z on the fit's standardized
 * scale). They sum with the intercept to the row's log-odds, so they rank what pushed that row's
 * score up or down. `out` is reused when given, to keep per-row loops allocation-free.
 */
export function logisticContributions(
  model: LogisticModel,
  features: readonly Float64Array[],
  row: number,
  out: Float64Array = new Float64Array(model.coef.length),
): Float64Array {
  checkWidth(model, features);
  for (let j = 0; j < features.length; j++) {
    const b = model.coef[j];
    out[j] = b === 0 ? 0 : b * ((features[j][row] - model.means[j]) / model.sds[j]);
  }
  return out;
}

function checkWidth(model: LogisticModel, features: readonly Float64Array[]): void {
  if (features.length !== model.names.length) {
    throw new LogisticInputError(
      `logistic: model has ${model.names.length} features (${model.names.join(', ')}), got ${features.length} columns`,
      'features',
    );
  }
}

function numberOption(r: Record<string, unknown>, key: keyof LogisticConfig, ok: (v: number) => boolean, expected: string): number {
  const v = r[key];
  if (v === undefined) return DEFAULTS[key];
  if (typeof v !== 'number' || !Number.isFinite(v) || !ok(v)) {
    throw new LogisticConfigError(`logistic: ${key} must be ${expected}, got ${JSON.stringify(v)}`, key, v);
  }
  return v;
}
