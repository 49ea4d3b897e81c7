/**
 * Population Stability Index between an expected (training) and an actual (scoring) sample:
 * PSI = sum_i (a_i - e_i) ln(a_i / e_i) over shares per bin.
 */
import { MetricInputError } from './input.js';
import { countBelow, linspace, quantileSorted } from './quantile.js';

// Common practice, no source: below 0.1 stable, 0.1-0.25 moderate shift, 0.25 or more major shift.
export const PSI_MODERATE = 0.1;
export const PSI_MAJOR = 0.25;

/**
 * An empty bin makes ln(a/e) infinite. Its share is floored at this value (only a zero share is
 * changed, shares are not renormalised); a bin empty in both samples contributes 0.
 * Common practice, no source.
 */
export const PSI_EMPTY_SHARE = 1e-4;

export interface PsiResult {
  readonly psi: number;
  readonly shareExpected: Float64Array;
  readonly shareActual: Float64Array;
  readonly contribution: Float64Array;
}

export function psi(countExpected: ArrayLike<number>, countActual: ArrayLike<number>): PsiResult {
  const k = countExpected.length;
  if (countActual.length !== k) {
    throw new MetricInputError('expected and actual have different bin counts', 'psi', { expected: k, actual: countActual.length });
  }
  let te = 0;
  let ta = 0;
  for (let i = 0; i < k; i++) {
    if (!(countExpected[i] >= 0) || !(countActual[i] >= 0)) throw new MetricInputError('bin counts must be >= 0', 'psi', { bin: i });
    te += countExpected[i];
    ta += countActual[i];
  }
  if (te === 0 || ta === 0) throw new MetricInputError('a sample has no rows', 'psi', { expectedRows: te, actualRows: ta });
  const shareExpected = new Float64Array(k);
  const shareActual = new Float64Array(k);
  const contribution = new Float64Array(k);
  let total = 0;
  for (let i = 0; i < k; i++) {
    const e = countExpected[i] / te;
    const a = countActual[i] / ta;
    shareExpected[i] = e;
    shareActual[i] = a;
    if (e === 0 && a === 0) continue;
    const ef = e === 0 ? PSI_EMPTY_SHARE : e;
    const af = a === 0 ? PSI_EMPTY_SHARE : a;
    contribution[i] = (af - ef) * Math.log(af / ef);
    total += contribution[i];
  }
  return { psi: total, shareExpected, shareActual, contribution };
}

export interface DecileBins {
  /** Upper-inclusive inner edges: bins (-inf, e1], (e1, e2], ..., (e_k, inf). */
  readonly edges: Float64Array;
  readonly countExpected: Float64Array;
  readonly countActual: Float64Array;
  /** Rows with a missing (NaN) value; they form an extra last bin only when either count is non-zero. */
  readonly missingExpected: number;
  readonly missingActual: number;
}

/**
 * Edges are the distinct deciles numpy.unique(numpy.quantile(expected, linspace(0.1, 0.9, 9)))
 * of the expected sample's non-missing values, so heavy ties give fewer, unequal bins.
 */
export function decileBins(expected: Float64Array, actual: Float64Array): DecileBins {
  let m = 0;
  for (let i = 0; i < expected.length; i++) if (!Number.isNaN(expected[i])) m++;
  if (m === 0) throw new MetricInputError('expected sample has no non-missing values', 'decileBins');
  const sorted = new Float64Array(m);
  for (let i = 0, k = 0; i < expected.length; i++) if (!Number.isNaN(expected[i])) sorted[k++] = expected[i];
  sorted.sort();
  const qs = linspace(0.1, 0.9, 9);
  const raw = new Float64Array(9);
  for (let i = 0; i < 9; i++) raw[i] = quantileSorted(sorted, qs[i]);
  let u = 0;
  for (let i = 0; i < 9; i++) if (i === 0 || raw[i] !== raw[u - 1]) raw[u++] = raw[i];
  const edges = raw.slice(0, u);
  const count = (x: Float64Array): [Float64Array, number] => {
    const c = new Float64Array(u + 1);
    let missing = 0;
    for (let i = 0; i < x.length; i++) {
      if (Number.isNaN(x[i])) missing++;
      else c[countBelow(edges, x[i])]++;
    }
    return [c, missing];
  };
  const [countExpected, missingExpected] = count(expected);
  const [countActual, missingActual] = count(actual);
  return { edges, countExpected, countActual, missingExpected, missingActual };
}

/** PSI over decile bins of the expected sample, with a missing-value bin when either sample has one. */
export function psiDeciles(expected: Float64Array, actual: Float64Array): PsiResult & { readonly bins: DecileBins } {
  const bins = decileBins(expected, actual);
  const withMissing = bins.missingExpected + bins.missingActual > 0;
  const ce = withMissing ? Float64Array.of(...bins.countExpected, bins.missingExpected) : bins.countExpected;
  const ca = withMissing ? Float64Array.of(...bins.countActual, bins.missingActual) : bins.countActual;
  return { ...psi(ce, ca), bins };
}
