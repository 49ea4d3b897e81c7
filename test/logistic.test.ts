import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import LogisticRegression from 'ml-logistic-regression';
import { Matrix } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { fitLogistic, LogisticInputError, type LogisticFit } from '../stages/core/newton-logistic.js';
import { logistic, logisticContributions, LogisticConfigError } from '../stages/learners/logistic.js';
import { numericColumnOf, readCsv, targetOf } from './helpers/read-csv.js';

const ref = (name: string): string => fileURLToPath(new URL(`./reference/${name}`, import.meta.url));

// Wisconsin Diagnostic Breast Cancer as shipped in scikit-learn 1.2.1 (Street, Wolberg & Mangasarian 1993);
// `malignant` = 1 - sklearn's target. See test/reference/PROVENANCE.md.
const table = readCsv(ref('breast_cancer.csv'));
const y = targetOf(table, 'malignant', '1');
const n = table.nRows;
const allRows = Uint32Array.from({ length: n }, (_, i) => i);

interface Expected {
  inputs: { features: string[]; scaler_mean: number[]; scaler_scale_ddof0: number[] };
  expected: { intercept: number; coef: Record<string, number>; objective_at_optimum: number };
}
interface Subset {
  features: string[];
  intercept: number;
  coef: Record<string, number>;
}
const l2Oracle = JSON.parse(readFileSync(ref('logreg_l2_c1_breast_cancer.json'), 'utf8')) as Expected;
const unpenalized = JSON.parse(readFileSync(ref('logreg_unpenalized_breast_cancer.json'), 'utf8')) as {
  expected: { subset5: Subset; mean10: Subset; all30_standardized_linearly_separable: boolean };
};
const names30 = l2Oracle.inputs.features;

/** (x - mean) / sd with the population sd (ddof = 0), as the oracles' StandardScaler. */
function standardized(name: string): Float64Array {
  const v = numericColumnOf(table, name).values;
  let mean = 0;
  for (const x of v) mean += x;
  mean /= v.length;
  let ss = 0;
  for (const x of v) ss += (x - mean) ** 2;
  const sd = Math.sqrt(ss / v.length);
  return v.map((x) => (x - mean) / sd);
}
const Z = new Map(names30.map((nm) => [nm, standardized(nm)]));
const cols = (names: readonly string[]): Float64Array[] => names.map((nm) => Z.get(nm)!);

/** Gradient of Σ w·logloss + (l2/2)‖β‖², written out independently of the solver. Index 0 = intercept. */
function gradient(X: Float64Array[], fit: LogisticFit, l2: number): number[] {
  const g = new Array<number>(X.length + 1).fill(0);
  for (let i = 0; i < n; i++) {
    let eta = fit.intercept;
    for (let j = 0; j < X.length; j++) eta += fit.coef[j] * X[j][i];
    const r = 1 / (1 + Math.exp(-eta)) - y[i];
    g[0] += r;
    for (let j = 0; j < X.length; j++) g[j + 1] += r * X[j][i];
  }
  for (let j = 0; j < X.length; j++) g[j + 1] += l2 * fit.coef[j];
  return g;
}

describe('fitLogistic: L2 optimum on breast cancer', () => {
  // scikit-learn 1.2.1 LogisticRegression(penalty='l2', C=1, solver='newton-cholesky', tol=1e-12), cross-checked by
  // an independent numpy Newton loop; features standardized with ddof=0; penalty on the summed loss, so l2 = 1/C = 1.
  const fit = fitLogistic(cols(names30), allRows, y, { l2: 1 });

  it('matches the reference coefficients, intercept (abs 1e-6) and objective (rel 1e-9)', () => {
    expect(fit.converged).toBe(true);
    expect(fit.status).toBe('converged');
    expect(Math.abs(fit.intercept - l2Oracle.expected.intercept)).toBeLessThan(1e-6);
    names30.forEach((nm, j) => expect(Math.abs(fit.coef[j] - l2Oracle.expected.coef[nm]), nm).toBeLessThan(1e-6));
    const rel = Math.abs(fit.objective - l2Oracle.expected.objective_at_optimum) / l2Oracle.expected.objective_at_optimum;
    expect(rel).toBeLessThan(1e-9);
  });

  it('stops at a stationary point (independently computed gradient ≈ 0)', () => {
    for (const gj of gradient(cols(names30), fit, 1)) expect(Math.abs(gj)).toBeLessThan(1e-8);
  });
});

describe('fitLogistic: unpenalized', () => {
  // scikit-learn 1.2.1 LogisticRegression(penalty=None, solver='newton-cg', tol=1e-12); R 4.2.2 glm(binomial) agrees
  // (oracles expected/r_glm.json). Tolerances as stated in the oracle: 1e-6 (5 features), 1e-3 (ill-conditioned 10).
  for (const [key, tol] of [
    ['subset5', 1e-6],
    ['mean10', 1e-3],
  ] as const) {
    it(`${key} matches the reference MLE within ${tol}`, () => {
      const sub = unpenalized.expected[key];
      const fit = fitLogistic(cols(sub.features), allRows, y, { l2: 0 });
      expect(fit.converged).toBe(true);
      expect(Math.abs(fit.intercept - sub.intercept)).toBeLessThan(tol);
      sub.features.forEach((nm, j) => expect(Math.abs(fit.coef[j] - sub.coef[nm]), nm).toBeLessThan(tol));
    });
  }

  it('all 30 features are separable: stops at maxIter with converged=false and finite values', () => {
    // The oracle records (LP feasibility) that the 30 standardized features separate the classes: no finite MLE.
    expect(unpenalized.expected.all30_standardized_linearly_separable).toBe(true);
    const fit = fitLogistic(cols(names30), allRows, y, { l2: 0, maxIter: 100 });
    expect(fit.converged).toBe(false);
    expect(fit.status).toBe('max_iter');
    expect(fit.iterations).toBe(100);
    expect(fit.message).toMatch(/separable/);
    expect(Number.isFinite(fit.intercept)).toBe(true);
    for (const c of fit.coef) expect(Number.isFinite(c)).toBe(true);
    expect(Number.isFinite(fit.objective)).toBe(true);
    // On separable data the infimum of the log-loss is 0, approached as the coefficients grow.
    expect(fit.objective).toBeLessThan(1e-6);
  });

  it('agrees with ml-logistic-regression 2.0.0 gradient ascent given an explicit column of ones', () => {
    // That library fits no intercept and ascends the unpenalized log-likelihood with a fixed step. With a column of
    // ones standing in for the intercept, a step below 2/λmax(X'WX) and enough steps it reaches the same MLE, so on
    // this well-conditioned subset (condition number 5.8 per the oracle) it is an independent check.
    const sub = unpenalized.expected.subset5;
    const X = cols(sub.features);
    const design = new Matrix(n, X.length + 1);
    for (let i = 0; i < n; i++) {
      design.set(i, 0, 1);
      for (let j = 0; j < X.length; j++) design.set(i, j + 1, X[j][i]);
    }
    const gd = new LogisticRegression({ numSteps: 5000, learningRate: 2e-3 });
    gd.train(design, Matrix.columnVector(Array.from(y)));
    // With two classes, classifier 0 is trained on the indicator "class is not 0", i.e. on y itself.
    const w = gd.classifiers[0].weights.to1DArray();
    const fit = fitLogistic(X, allRows, y, { l2: 0 });
    expect(Math.abs(w[0] - fit.intercept)).toBeLessThan(1e-6);
    X.forEach((_, j) => expect(Math.abs(w[j + 1] - fit.coef[j])).toBeLessThan(1e-6));
  });
});

describe('fitLogistic: weights and offsets (internal identities)', () => {
  const X = cols(unpenalized.expected.mean10.features);

  it('duplicating every row equals weight 2 (internal identity)', () => {
    const doubled = X.map((c) => {
      const d = new Float64Array(2 * n);
      d.set(c);
      d.set(c, n);
      return d;
    });
    const y2 = new Uint8Array(2 * n);
    y2.set(y);
    y2.set(y, n);
    const rows2 = Uint32Array.from({ length: 2 * n }, (_, i) => i);
    const dup = fitLogistic(doubled, rows2, y2, { l2: 1 });
    const weighted = fitLogistic(X, allRows, y, { l2: 1, weights: new Float64Array(n).fill(2) });
    expect(dup.converged && weighted.converged).toBe(true);
    expect(Math.abs(dup.intercept - weighted.intercept)).toBeLessThan(1e-9);
    dup.coef.forEach((c, j) => expect(Math.abs(c - weighted.coef[j])).toBeLessThan(1e-9));
    expect(Math.abs(dup.objective - weighted.objective) / dup.objective).toBeLessThan(1e-12);
  });

  it('weight 0 on a row equals leaving the row out (internal identity)', () => {
    const kept = Uint32Array.from(allRows.filter((r) => r % 3 !== 0));
    const w = Float64Array.from(allRows, (r) => (r % 3 === 0 ? 0 : 1));
    const sub = fitLogistic(X, kept, y, { l2: 1 });
    const zeroed = fitLogistic(X, allRows, y, { l2: 1, weights: w });
    expect(Math.abs(sub.intercept - zeroed.intercept)).toBeLessThan(1e-9);
    sub.coef.forEach((c, j) => expect(Math.abs(c - zeroed.coef[j])).toBeLessThan(1e-9));
  });

  it('an offset β̂_k·x_k in place of column k leaves the other coefficients at the full optimum (identity)', () => {
    // The penalty on β_k is a constant once β_k is fixed, so the remaining stationarity equations are unchanged.
    const full = fitLogistic(X, allRows, y, { l2: 1 });
    const k = 3;
    const offset = X[k].map((v) => full.coef[k] * v);
    const rest = X.filter((_, j) => j !== k);
    const withOffset = fitLogistic(rest, allRows, y, { l2: 1, offset });
    expect(Math.abs(withOffset.intercept - full.intercept)).toBeLessThan(1e-8);
    rest.forEach((_, j) => expect(Math.abs(withOffset.coef[j] - full.coef[j < k ? j : j + 1])).toBeLessThan(1e-8));
  });
});

describe('fitLogistic: lower bounds (projected Newton)', () => {
  const X = cols(names30);
  const unconstrained = fitLogistic(X, allRows, y, { l2: 1 });

  it('holds a negative coefficient at exactly 0 and satisfies KKT; free part equals the fit without that column', () => {
    const k = names30.indexOf('mean compactness');
    expect(unconstrained.coef[k]).toBeLessThan(0);
    const lower = new Float64Array(30).fill(-Infinity);
    lower[k] = 0;
    const fit = fitLogistic(X, allRows, y, { l2: 1, lower });
    expect(fit.converged).toBe(true);
    expect(fit.coef[k]).toBe(0);
    // KKT for min f s.t. β_k ≥ 0 (convex, so necessary and sufficient): ∂f/∂β_k ≥ 0 at the bound, 0 elsewhere.
    const g = gradient(X, fit, 1);
    expect(g[k + 1]).toBeGreaterThan(0);
    g.forEach((gj, a) => {
      if (a !== k + 1) expect(Math.abs(gj)).toBeLessThan(1e-8);
    });
    // Given KKT holds with β_k = 0, the optimum is the unconstrained optimum without column k (mathematical identity).
    const omitted = fitLogistic(
      X.filter((_, j) => j !== k),
      allRows,
      y,
      { l2: 1 },
    );
    expect(Math.abs(omitted.intercept - fit.intercept)).toBeLessThan(1e-8);
    omitted.coef.forEach((c, j) => expect(Math.abs(c - fit.coef[j < k ? j : j + 1])).toBeLessThan(1e-8));
    expect(Math.abs(omitted.objective - fit.objective) / fit.objective).toBeLessThan(1e-12);
    expect(fit.objective).toBeGreaterThan(unconstrained.objective);
  });

  it('with every coefficient bounded at 0 the KKT conditions hold for each one', () => {
    const fit = fitLogistic(X, allRows, y, { l2: 1, lower: new Float64Array(30) });
    expect(fit.converged).toBe(true);
    const g = gradient(X, fit, 1);
    expect(Math.abs(g[0])).toBeLessThan(1e-8);
    let atBound = 0;
    fit.coef.forEach((c, j) => {
      expect(c).toBeGreaterThanOrEqual(0);
      if (c === 0) {
        atBound++;
        expect(g[j + 1]).toBeGreaterThan(-1e-8);
      } else expect(Math.abs(g[j + 1])).toBeLessThan(1e-8);
    });
    // Unconstrained, 9 of the 30 coefficients are negative; the constraint must bind somewhere.
    expect(atBound).toBeGreaterThan(0);
  });
});

describe('fitLogistic: input errors', () => {
  it('throws LogisticInputError with the offending field', () => {
    const bad = Float64Array.from(Z.get('mean radius')!);
    bad[7] = NaN;
    expect(() => fitLogistic([bad], allRows, y, { l2: 1 })).toThrow(LogisticInputError);
    expect(() => fitLogistic(cols(['mean radius']), allRows, y, { l2: -1 })).toThrow(/l2/);
    expect(() => fitLogistic(cols(['mean radius']), allRows, y, { l2: 1, lower: new Float64Array(2) })).toThrow(/lower/);
  });
});

describe('logistic learner', () => {
  const raw = names30.map((nm) => numericColumnOf(table, nm).values);
  const config = logistic.resolveConfig({ l2: 1 });
  const rng = { next: () => 0.5, int: () => 0 };
  const model = logistic.fit({ features: raw, names: names30, rows: allRows, target: y, config, rng });

  it('standardizes with population sd over the fit rows and reaches the reference optimum', () => {
    // scikit-learn 1.2.1 StandardScaler (ddof=0) values and the L2 C=1 optimum, as above.
    names30.forEach((_, j) => {
      expect(Math.abs(model.means[j] - l2Oracle.inputs.scaler_mean[j]) / Math.abs(l2Oracle.inputs.scaler_mean[j])).toBeLessThan(1e-12);
      expect(Math.abs(model.sds[j] - l2Oracle.inputs.scaler_scale_ddof0[j]) / l2Oracle.inputs.scaler_scale_ddof0[j]).toBeLessThan(1e-12);
      expect(Math.abs(model.coef[j] - l2Oracle.expected.coef[names30[j]])).toBeLessThan(1e-6);
    });
    expect(Math.abs(model.intercept - l2Oracle.expected.intercept)).toBeLessThan(1e-6);
    expect(model.converged).toBe(true);
  });

  it('predicts the probabilities of the reference model', () => {
    const p = logistic.predict(model, raw, allRows);
    for (let i = 0; i < n; i++) {
      let eta = l2Oracle.expected.intercept;
      names30.forEach((nm, j) => {
        eta += l2Oracle.expected.coef[nm] * ((raw[j][i] - l2Oracle.inputs.scaler_mean[j]) / l2Oracle.inputs.scaler_scale_ddof0[j]);
      });
      expect(Math.abs(p[i] - 1 / (1 + Math.exp(-eta)))).toBeLessThan(1e-6);
    }
  });

  it('state is plain JSON and predicts identically after a round trip', () => {
    const back = JSON.parse(JSON.stringify(model)) as typeof model;
    expect(back).toEqual(model);
    expect(Array.isArray(model.coef) && Array.isArray(model.means) && Array.isArray(model.sds)).toBe(true);
    const rows = Uint32Array.from([0, 5, 100, 568]);
    expect(logistic.predict(back, raw, rows)).toEqual(logistic.predict(model, raw, rows));
  });

  it('contributions plus the intercept give each row’s log-odds (hence its probability)', () => {
    const p = logistic.predict(model, raw, allRows);
    const out = new Float64Array(30);
    for (const r of [0, 19, 300]) {
      const c = logisticContributions(model, raw, r, out);
      const eta = model.intercept + c.reduce((a, b) => a + b, 0);
      // Compared on the probability scale: the logit of a p within 1e-8 of 1 has no 1e-9 precision left.
      expect(Math.abs(1 / (1 + Math.exp(-eta)) - p[r])).toBeLessThan(1e-14);
    }
  });

  it('gives a constant column coefficient 0 and otherwise the fit without it', () => {
    const five = unpenalized.expected.subset5.features;
    const feats = five.map((nm) => numericColumnOf(table, nm).values);
    const constant = new Float64Array(n).fill(0.1);
    const cfg = logistic.resolveConfig({ l2: 0 });
    const withConst = logistic.fit({ features: [...feats, constant], names: [...five, 'c'], rows: allRows, target: y, config: cfg, rng });
    const without = logistic.fit({ features: feats, names: five, rows: allRows, target: y, config: cfg, rng });
    expect(withConst.coef[5]).toBe(0);
    expect(withConst.sds[5]).toBe(1);
    expect(withConst.converged).toBe(true);
    // Unpenalized on the oracle's 5 features: sklearn 1.2.1 newton-cg / R glm values, abs 1e-6.
    five.forEach((nm, j) => {
      expect(withConst.coef[j]).toBe(without.coef[j]);
      expect(Math.abs(without.coef[j] - unpenalized.expected.subset5.coef[nm])).toBeLessThan(1e-6);
    });
  });

  it('resolveConfig fills defaults and rejects bad values', () => {
    expect(logistic.resolveConfig(undefined)).toEqual({ l2: 1, max_iter: 100, tol: 1e-10 });
    expect(logistic.resolveConfig({ max_iter: 20 })).toEqual({ l2: 1, max_iter: 20, tol: 1e-10 });
    expect(() => logistic.resolveConfig({ l2: '1' })).toThrow(LogisticConfigError);
    expect(() => logistic.resolveConfig({ l2: -0.5 })).toThrow(/l2/);
    expect(() => logistic.resolveConfig({ max_iter: 2.5 })).toThrow(/max_iter/);
    expect(() => logistic.resolveConfig({ tol: 0 })).toThrow(/tol/);
    expect(() => logistic.resolveConfig({ lambda: 1 })).toThrow(/unknown option/);
  });
});
