/**
 * The implicit last feature stage: it turns whatever numeric features the chain produced into the
 * dense matrix learners take. A missing value becomes the fit rows' median, and every column that
 * had missing values in the fit rows gains a 0/1 `__missing` flag, so learners can still use the
 * fact that a value was absent. Categorical and date columns that no stage encoded are dropped.
 */
import { numeric, type Column, type FrameView } from '../pipeline/frame.js';
import type { FitInput, Stage } from './types.js';

export interface ImputeState {
  readonly columns: { readonly name: string; readonly median: number; readonly flag: boolean }[];
}

type ImputeConfig = Record<string, never>;

export const impute: Stage<ImputeConfig, ImputeState> = {
  kind: 'impute',
  version: 1,
  supervised: false,
  replacesInputs: true,
  resolveConfig(): ImputeConfig {
    return {};
  },
  selectInputs(_config, available) {
    return available.filter((c) => c.type === 'numeric').map((c) => c.name);
  },
  fit({ view, inputs }: FitInput<ImputeConfig>): ImputeState {
    const rows = view.rows;
    const scratch = new Float64Array(rows.length);
    const columns = inputs.map((name) => {
      const values = numericValues(view, name);
      let n = 0;
      for (let i = 0; i < rows.length; i++) {
        const v = values[rows[i]];
        if (v === v) scratch[n++] = v;
      }
      const median = n === 0 ? 0 : medianOf(scratch.subarray(0, n));
      return { name, median, flag: n < rows.length };
    });
    return { columns };
  },
  apply(state: ImputeState, view: FrameView): Column[] {
    const rows = view.rows;
    const out: Column[] = [];
    for (const c of state.columns) {
      const values = numericValues(view, c.name);
      const filled = new Float64Array(rows.length);
      const flag = c.flag ? new Float64Array(rows.length) : undefined;
      for (let i = 0; i < rows.length; i++) {
        const v = values[rows[i]];
        if (v === v) filled[i] = v;
        else {
          filled[i] = c.median;
          if (flag) flag[i] = 1;
        }
      }
      out.push(numeric(c.name, filled));
      if (flag) out.push(numeric(`${c.name}__missing`, flag));
    }
    return out;
  },
};

function numericValues(view: FrameView, name: string): Float64Array {
  const col = view.columns.get(name);
  if (!col || col.type !== 'numeric') throw new Error(`impute: numeric column ${name} is not available`);
  return col.values;
}

/** Median by sorting a scratch copy (the mean of the two middle values for an even count). */
function medianOf(values: Float64Array): number {
  values.sort();
  const m = values.length >> 1;
  return values.length % 2 === 1 ? values[m] : (values[m - 1] + values[m]) / 2;
}
