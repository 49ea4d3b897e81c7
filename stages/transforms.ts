/**
 * `transforms`: for each numeric column, picks the shape in which the column relates most nearly
 * linearly to the log-odds of the event, and emits the column in that shape as `<col>__tf`.
 *
 * Each candidate shape is scored by the maximized log-likelihood of a univariate logistic
 * regression (intercept + slope) on the fit rows where the column is present; the best wins, ties
 * going to the earlier shape in TRANSFORM_SHAPES. The stage reads the target, so the runner
 * cross-fits it.
 *
 * `rank_logit` is built from the target itself (about ten fitted bin rates) while the other shapes
 * spend one slope, so its in-sample log-likelihood is optimistic by roughly the extra degrees of
 * freedom; it wins only when the relation is far from every smooth shape offered.
 *
 * Apply-time values outside the fit range are clamped to it before shaping. The shift in
 * log/sqrt/reciprocal uses the fit rows' minimum; shifting by the minimum of the rows being scored
 * would make one row's value depend on which other rows are scored with it (leaking across rows and
 * breaking parity between holdout predictions and the scoring bundle), and values below the fit
 * minimum would fall outside the domain of log and sqrt.
 */
import { numeric, type Column, type FrameView, type NumericColumn } from '../pipeline/frame.js';
import { fitLogistic, log1pExp } from './core/newton-logistic.js';
import type { FitInput, Json, Stage, StageReport } from './types.js';

/** Candidate shapes, in tie-break order. */
export const TRANSFORM_SHAPES = ['identity', 'log', 'sqrt', 'square', 'reciprocal', 'rank_logit'] as const;
export type TransformShape = (typeof TRANSFORM_SHAPES)[number];

export interface TransformsConfig {
  /** Columns to shape; null = every numeric column available. */
  readonly columns: readonly string[] | null;
  /** Shapes to try, in TRANSFORM_SHAPES order. */
  readonly candidates: readonly TransformShape[];
}

export interface TransformColumnState {
  readonly name: string;
  readonly chosen: TransformShape;
  /** Range of the column over the fit rows where it is present; null when it never was. */
  readonly min: number | null;
  readonly max: number | null;
  /** Fit rows with the column present, and the events among them. */
  readonly n: number;
  readonly events: number;
  /** rank_logit bins: bin b holds edges[b−1] ≤ x < edges[b] (bin 0 below edges[0]); empty when not fitted. */
  readonly edges: number[];
  /** Empirical logit of each rank_logit bin (edges.length + 1 entries). */
  readonly binLogits: number[];
  /** Maximized log-likelihood per candidate (state `candidates` order); null when not computable. */
  readonly logLik: (number | null)[];
  /** Per candidate: true when the unpenalized fit did not converge and the tiny-ridge refit was used. */
  readonly ridge: boolean[];
}

export interface TransformsState {
  readonly candidates: TransformShape[];
  readonly columns: TransformColumnState[];
}

/** A config value the stage cannot use; `key` names the option. */
export class TransformsConfigError extends Error {
  constructor(
    message: string,
    readonly key: string,
    readonly value: unknown,
  ) {
    super(message);
    this.name = 'TransformsConfigError';
  }
}

/** The data or state lacks a column the stage was told to read, or it is not numeric. */
export class TransformsInputError extends Error {
  constructor(
    message: string,
    readonly column: string,
  ) {
    super(message);
    this.name = 'TransformsInputError';
  }
}

const BINS = 10;
/**
 * Ridge used only when the unpenalized fit fails to converge (a shape that separates the classes):
 * small enough not to move a well-posed fit's log-likelihood, large enough to give a finite optimum.
 */
const FALLBACK_L2 = 1e-8;
/** A shaped column whose sd is below this fraction of its mean magnitude is constant to rounding. */
const CONSTANT_RELATIVE_SD = 1e-12;

export const transforms: Stage<TransformsConfig, TransformsState> = {
  kind: 'transforms',
  version: 1,
  supervised: true,
  replacesInputs: false,

  resolveConfig(raw: unknown): TransformsConfig {
    if (raw === undefined || raw === null) return { columns: null, candidates: [...TRANSFORM_SHAPES] };
    if (typeof raw !== 'object' || Array.isArray(raw)) {
      throw new TransformsConfigError(`transforms: config must be a mapping, got ${JSON.stringify(raw)}`, '', raw);
    }
    const r = raw as Record<string, unknown>;
    for (const key of Object.keys(r)) {
      if (key !== 'columns' && key !== 'candidates') {
        throw new TransformsConfigError(`transforms: unknown option '${key}' (known: columns, candidates)`, key, r[key]);
      }
    }
    let columns: string[] | null = null;
    if (r.columns !== undefined && r.columns !== null) {
      if (!Array.isArray(r.columns) || r.columns.some((c) => typeof c !== 'string')) {
        throw new TransformsConfigError(`transforms: columns must be a list of column names, got ${JSON.stringify(r.columns)}`, 'columns', r.columns);
      }
      columns = [...(r.columns as string[])];
    }
    if (r.candidates === undefined || r.candidates === null) return { columns, candidates: [...TRANSFORM_SHAPES] };
    const cands = r.candidates;
    if (!Array.isArray(cands) || cands.length === 0) {
      throw new TransformsConfigError(`transforms: candidates must be a non-empty list of shapes (${TRANSFORM_SHAPES.join(', ')})`, 'candidates', cands);
    }
    for (const c of cands) {
      if (!(TRANSFORM_SHAPES as readonly unknown[]).includes(c)) {
        throw new TransformsConfigError(`transforms: unknown candidate ${JSON.stringify(c)} (known: ${TRANSFORM_SHAPES.join(', ')})`, 'candidates', c);
      }
    }
    if (new Set(cands).size !== cands.length) {
      throw new TransformsConfigError(`transforms: candidates lists a shape twice: ${JSON.stringify(cands)}`, 'candidates', cands);
    }
    // Canonical order, so the tie-break does not depend on how the config happens to list them.
    return { columns, candidates: TRANSFORM_SHAPES.filter((s) => cands.includes(s)) };
  },

  selectInputs(config: TransformsConfig, available: readonly Column[]): string[] {
    if (config.columns === null) return available.filter((c) => c.type === 'numeric').map((c) => c.name);
    return config.columns.map((name) => {
      const col = available.find((c) => c.name === name);
      if (!col) throw new TransformsConfigError(`transforms: column '${name}' is not an available feature`, 'columns', name);
      if (col.type !== 'numeric') throw new TransformsConfigError(`transforms: column '${name}' is ${col.type}, not numeric`, 'columns', name);
      return name;
    });
  },

  fit({ view, target, inputs, config }: FitInput<TransformsConfig>): TransformsState {
    const candidates = [...config.candidates];
    const cols = inputs.map((name) => numericInput(view, name));
    // One scratch column over the shared index space, reused for every column and shape.
    const scratch = new Float64Array(cols.length > 0 ? cols[0].values.length : 0);
    return { candidates, columns: cols.map((col) => fitColumn(col, view.rows, target, candidates, scratch)) };
  },

  apply(state: TransformsState, view: FrameView, inputs: readonly string[]): Column[] {
    const rows = view.rows;
    return inputs.map((name) => {
      const cs = state.columns.find((c) => c.name === name);
      if (!cs) throw new TransformsInputError(`transforms: the fitted state has no column '${name}'`, name);
      const values = numericInput(view, name).values;
      const out = new Float64Array(rows.length);
      const edges = Float64Array.from(cs.edges);
      const logits = Float64Array.from(cs.binLogits);
      const lo = cs.min ?? -Infinity;
      const hi = cs.max ?? Infinity;
      const shift = cs.min ?? 0;
      for (let i = 0; i < rows.length; i++) {
        const x = values[rows[i]];
        out[i] = Number.isFinite(x) ? shape(cs.chosen, x < lo ? lo : x > hi ? hi : x, shift, edges, logits) : NaN;
      }
      return numeric(`${name}__tf`, out);
    });
  },

  describe(state: TransformsState): StageReport {
    const header = ['column', 'chosen', ...state.candidates.map((c) => `loglik_${c}`)];
    const rows = state.columns.map((c) => [c.name, c.chosen, ...c.logLik.map((v) => (v === null ? '' : v))]);
    const chosen: Record<string, Json> = {};
    for (const s of state.candidates) chosen[s] = state.columns.filter((c) => c.chosen === s).length;
    return { tables: { transforms: { header, rows } }, metrics: { chosen } };
  },
};

/** The shaped value of an in-range x; `shift` is the fit minimum. */
function shape(s: TransformShape, x: number, shift: number, edges: Float64Array, logits: Float64Array): number {
  switch (s) {
    case 'identity':
      return x;
    case 'log':
      return Math.log(x - shift + 1);
    case 'sqrt':
      return Math.sqrt(x - shift);
    case 'square':
      return x * x;
    case 'reciprocal':
      return 1 / (x - shift + 1);
    case 'rank_logit':
      return logits[binOf(x, edges)];
  }
}

/** Number of edges ≤ x: the bin index under the convention documented on `edges`. */
function binOf(x: number, edges: Float64Array): number {
  let lo = 0;
  let hi = edges.length;
  while (lo < hi) {
    const mid = (lo + hi) >>> 1;
    if (edges[mid] <= x) lo = mid + 1;
    else hi = mid;
  }
  return lo;
}

function fitColumn(
  col: NumericColumn,
  fitRows: Uint32Array,
  target: Uint8Array,
  candidates: readonly TransformShape[],
  scratch: Float64Array,
): TransformColumnState {
  const values = col.values;
  let n = 0;
  for (let i = 0; i < fitRows.length; i++) if (Number.isFinite(values[fitRows[i]])) n++;
  const rows = new Uint32Array(n);
  let events = 0;
  let min = Infinity;
  let max = -Infinity;
  for (let i = 0, k = 0; i < fitRows.length; i++) {
    const r = fitRows[i];
    const x = values[r];
    if (!Number.isFinite(x)) continue;
    rows[k++] = r;
    events += target[r];
    if (x < min) min = x;
    if (x > max) max = x;
  }
  const none = candidates.map(() => null);
  const noRidge = candidates.map(() => false);
  if (n === 0) {
    return { name: col.name, chosen: 'identity', min: null, max: null, n, events, edges: [], binLogits: [], logLik: none, ridge: noRidge };
  }
  // With one class present no shape has a finite maximum-likelihood fit to compare.
  if (events === 0 || events === n) {
    return { name: col.name, chosen: 'identity', min, max, n, events, edges: [], binLogits: [], logLik: none, ridge: noRidge };
  }

  const bins = candidates.includes('rank_logit') ? rankLogitBins(values, rows, target, min) : { edges: new Float64Array(0), logits: new Float64Array(0) };
  const logLik: number[] = [];
  const ridge: boolean[] = [];
  let best = 0;
  for (let c = 0; c < candidates.length; c++) {
    const s = candidates[c];
    for (let i = 0; i < n; i++) scratch[rows[i]] = shape(s, values[rows[i]], min, bins.edges, bins.logits);
    const fit = univariateLogLik(scratch, rows, target, events);
    logLik.push(fit.logLik);
    ridge.push(fit.ridge);
    if (fit.logLik > logLik[best]) best = c;
  }
  return {
    name: col.name,
    chosen: candidates[best],
    min,
    max,
    n,
    events,
    edges: Array.from(bins.edges),
    binLogits: Array.from(bins.logits),
    logLik,
    ridge,
  };
}

/**
 * Equal-count bins: inner edges at the values of rank ⌊k·n/10⌋ (k = 1..9) of the sorted fit
 * values, with duplicates and edges equal to the minimum dropped so that every bin holds a fit
 * value. Each bin's value is Cox & Snell's empirical logistic transform ln((e + ½)/(m − e + ½))
 * (Cox, D.R. and Snell, E.J., Analysis of Binary Data, 2nd ed., Chapman & Hall, 1989), which stays
 * finite for bins with no or only events.
 */
function rankLogitBins(values: Float64Array, rows: Uint32Array, target: Uint8Array, min: number): { edges: Float64Array; logits: Float64Array } {
  const n = rows.length;
  const sorted = new Float64Array(n);
  for (let i = 0; i < n; i++) sorted[i] = values[rows[i]];
  sorted.sort();
  const edgeList: number[] = [];
  for (let k = 1; k < BINS; k++) {
    const e = sorted[Math.floor((k * n) / BINS)];
    if (e > min && (edgeList.length === 0 || e > edgeList[edgeList.length - 1])) edgeList.push(e);
  }
  const edges = Float64Array.from(edgeList);
  const count = new Float64Array(edges.length + 1);
  const hits = new Float64Array(edges.length + 1);
  for (let i = 0; i < n; i++) {
    const b = binOf(values[rows[i]], edges);
    count[b]++;
    hits[b] += target[rows[i]];
  }
  const logits = new Float64Array(count.length);
  for (let b = 0; b < count.length; b++) logits[b] = Math.log((hits[b] + 0.5) / (count[b] - hits[b] + 0.5));
  return { edges, logits };
}

/**
 * Maximized log-likelihood of logit P(y=1) = a + b·x over `rows`, x read from `x` (overwritten:
 * it is standardized in place). The log-likelihood of a one-slope model with an intercept is
 * unchanged by any affine rescaling of x, and standardizing keeps Newton's Hessian well
 * conditioned for shapes like `square` of large raw values.
 */
function univariateLogLik(x: Float64Array, rows: Uint32Array, y: Uint8Array, events: number): { logLik: number; ridge: boolean } {
  const n = rows.length;
  let mean = 0;
  for (let i = 0; i < n; i++) mean += x[rows[i]];
  mean /= n;
  let ss = 0;
  for (let i = 0; i < n; i++) {
    const d = x[rows[i]] - mean;
    ss += d * d;
  }
  const sd = Math.sqrt(ss / n);
  if (!(sd > CONSTANT_RELATIVE_SD * Math.abs(mean))) {
    // A constant shape carries no information: the intercept-only maximum, in closed form.
    const nonEvents = n - events;
    return { logLik: events * Math.log(events / n) + nonEvents * Math.log(nonEvents / n), ridge: false };
  }
  for (let i = 0; i < n; i++) x[rows[i]] = (x[rows[i]] - mean) / sd;
  let fit = fitLogistic([x], rows, y, { l2: 0 });
  let ridge = false;
  if (!fit.converged) {
    fit = fitLogistic([x], rows, y, { l2: FALLBACK_L2 });
    ridge = true;
  }
  const a = fit.intercept;
  const b = fit.coef[0];
  let ll = 0;
  for (let i = 0; i < n; i++) {
    const r = rows[i];
    const eta = a + b * x[r];
    ll -= y[r] === 1 ? log1pExp(-eta) : log1pExp(eta);
  }
  return { logLik: ll, ridge };
}

function numericInput(view: FrameView, name: string): NumericColumn {
  const col = view.columns.get(name);
  if (!col) throw new TransformsInputError(`transforms: column '${name}' is not in the data`, name);
  if (col.type !== 'numeric') throw new TransformsInputError(`transforms: column '${name}' is ${col.type}, not numeric`, name);
  return col;
}
