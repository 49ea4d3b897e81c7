/**
 * The implicit last feature stage: it turns whatever numeric features the chain produced into the
 * dense matrix learners take. A missing value becomes the fit rows' median, and every column that
 * had missing values in the fit rows gains a 0/1 `__missing` flag, so learners can still use the
 * fact that a value was absent. Categorical and date columns that no stage encoded are dropped.
 *
 * A column is re-emitted (under its own name, replacing it) only when the rows at hand have a
 * missing value in it; otherwise the learners read the original array, which is already complete.
 *
 * Columns missing on exactly the same fit rows share one flag, the first such column's: every
 * part derived from one date is missing together, and a dozen identical 0/1 columns would only
 * add exactly collinear inputs (and width, which linear learners pay for quadratically).
 */
import { numeric, type Column, type FrameView } from '../pipeline/frame.js';
import type { FitInput, Stage } from './types.js';

export interface ImputeState {
  /**
   * `flag`: the column emits `<name>__missing`; `sameAs`: the earlier column whose flag already
   * marks exactly this column's missing fit rows (then `flag` is false).
   */
  readonly columns: { readonly name: string; readonly median: number; readonly flag: boolean; readonly sameAs: string | null }[];
}

type ImputeConfig = Record<string, never>;

export const impute: Stage<ImputeConfig, ImputeState> = {
  kind: 'impute',
  version: 3,
  supervised: false,
  replacesInputs: false,
  resolveConfig(): ImputeConfig {
    return {};
  },
  selectInputs(_config, available) {
    return available.filter((c) => c.type === 'numeric').map((c) => c.name);
  },
  fit({ view, inputs }: FitInput<ImputeConfig>): ImputeState {
    const rows = view.rows;
    const scratch = new Float64Array(rows.length);
    const gaps = new Uint32Array(rows.length);
    // missing-row positions of each column that got its own flag, to recognise identical patterns
    const flagged: { name: string; at: Uint32Array }[] = [];
    const columns = inputs.map((name) => {
      const values = numericValues(view, name);
      let n = 0;
      let m = 0;
      for (let i = 0; i < rows.length; i++) {
        const v = values[rows[i]];
        if (v === v) scratch[n++] = v;
        else gaps[m++] = i;
      }
      const median = n === 0 ? 0 : medianOf(scratch.subarray(0, n));
      if (m === 0) return { name, median, flag: false, sameAs: null };
      const at = gaps.subarray(0, m);
      const twin = flagged.find((f) => sameRows(f.at, at));
      if (twin) return { name, median, flag: false, sameAs: twin.name };
      flagged.push({ name, at: at.slice() });
      return { name, median, flag: true, sameAs: null };
    });
    return { columns };
  },
  apply(state: ImputeState, view: FrameView): Column[] {
    const rows = view.rows;
    const out: Column[] = [];
    for (const c of state.columns) {
      const values = numericValues(view, c.name);
      let gaps = 0;
      for (let i = 0; i < rows.length; i++) if (values[rows[i]] !== values[rows[i]]) gaps++;
      const flag = c.flag ? new Float64Array(rows.length) : undefined;
      if (gaps > 0) {
        const filled = new Float64Array(rows.length);
        for (let i = 0; i < rows.length; i++) {
          const v = values[rows[i]];
          if (v === v) filled[i] = v;
          else {
            filled[i] = c.median;
            if (flag) flag[i] = 1;
          }
        }
        out.push(numeric(c.name, filled));
      }
      if (flag) out.push(numeric(`${c.name}__missing`, flag));
    }
    return out;
  },
};

function sameRows(a: Uint32Array, b: Uint32Array): boolean {
  if (a.length !== b.length) return false;
  for (let i = 0; i < a.length; i++) if (a[i] !== b[i]) return false;
  return true;
}

function numericValues(view: FrameView, name: string): Float64Array {
  const col = view.columns.get(name);
  if (!col || col.type !== 'numeric') throw new Error(`impute: numeric column ${name} is not available`);
  return col.values;
}

/**
 * Median of a scratch copy (the mean of the two middle values for an even count), by selection
 * rather than a full sort: Hoare's FIND with the median of three as pivot, expected linear time.
 * Equal values stop both scans, so columns of few distinct values still split evenly.
 */
function medianOf(values: Float64Array): number {
  const n = values.length;
  const m = n >> 1;
  const upper = select(values, m);
  if (n % 2 === 1) return upper;
  // after select(m), values[0..m) are all <= values[m]: the lower middle is their maximum
  let lower = -Infinity;
  for (let i = 0; i < m; i++) if (values[i] > lower) lower = values[i];
  return (lower + upper) / 2;
}

/** Rearranges `a` so that a[k] is the k-th smallest, smaller-or-equal values before it; returns a[k]. */
function select(a: Float64Array, k: number): number {
  let lo = 0;
  let hi = a.length - 1;
  while (lo < hi) {
    const mid = (lo + hi) >>> 1;
    if (a[mid] < a[lo]) swap(a, mid, lo);
    if (a[hi] < a[lo]) swap(a, hi, lo);
    if (a[hi] < a[mid]) swap(a, hi, mid);
    const pivot = a[mid];
    let i = lo;
    let j = hi;
    while (i <= j) {
      while (a[i] < pivot) i++;
      while (a[j] > pivot) j--;
      if (i <= j) {
        swap(a, i, j);
        i++;
        j--;
      }
    }
    if (k <= j) hi = j;
    else if (k >= i) lo = i;
    else return a[k];
  }
  return a[k];
}

function swap(a: Float64Array, i: number, j: number): void {
  const t = a[i];
  a[i] = a[j];
  a[j] = t;
}
