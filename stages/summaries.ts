/**
 * Row-wise summaries across the `__z` columns: how risky a row looks on average, at its worst
 * and best, how much its signals disagree, and how many signals are individually strong.
 */
import { numeric, type Column, type FrameView } from '../pipeline/frame.js';
import type { FitInput, Stage } from './types.js';

export class SummariesConfigError extends Error {
  constructor(
    message: string,
    readonly option: string,
    readonly value: unknown,
  ) {
    super(`${message} (got ${option} = ${JSON.stringify(value)})`);
    this.name = 'SummariesConfigError';
  }
}

export interface SummariesConfig {
  /** A z above high_z counts as high, below −high_z as low. */
  readonly high_z: number;
}

export interface SummariesState {
  readonly columns: string[];
  readonly highZ: number;
}

const Z = '__z';

export const summaries: Stage<SummariesConfig, SummariesState> = {
  kind: 'summaries',
  version: 1,
  supervised: false,
  replacesInputs: false,

  resolveConfig(raw: unknown): SummariesConfig {
    const o = raw === undefined || raw === null ? {} : raw;
    if (typeof o !== 'object' || Array.isArray(o)) throw new SummariesConfigError('summaries config must be a mapping', 'summaries', raw);
    const rec = o as Record<string, unknown>;
    for (const k of Object.keys(rec)) if (k !== 'high_z') throw new SummariesConfigError('unknown summaries option', k, rec[k]);
    const h = rec.high_z ?? 1.0;
    if (typeof h !== 'number' || !(h >= 0) || !Number.isFinite(h)) throw new SummariesConfigError('high_z must be a finite number >= 0', 'high_z', h);
    return { high_z: h };
  },

  selectInputs(_config: SummariesConfig, available: readonly Column[]): string[] {
    return available.filter((c) => c.type === 'numeric' && c.name.endsWith(Z)).map((c) => c.name);
  },

  fit({ inputs, config }: FitInput<SummariesConfig>): SummariesState {
    return { columns: inputs.slice(), highZ: config.high_z };
  },

  /**
   * NaN inputs are skipped; a row with no value gets NaN summaries and zero counts.
   * z_sd is the population standard deviation across the row's values (ddof 0), so one value gives 0.
   */
  apply(state: SummariesState, view: FrameView): Column[] {
    const rows = view.rows;
    const n = rows.length;
    const zs = state.columns.map((name) => {
      const c = view.columns.get(name);
      if (!c || c.type !== 'numeric') throw new SummariesConfigError('summaries input is not a numeric column', 'column', name);
      return c.values;
    });
    const mean = new Float64Array(n);
    const max = new Float64Array(n);
    const min = new Float64Array(n);
    const sd = new Float64Array(n);
    const high = new Float64Array(n);
    const low = new Float64Array(n);
    const h = state.highZ;
    for (let i = 0; i < n; i++) {
      const r = rows[i];
      let k = 0;
      let s = 0;
      let hi = -Infinity;
      let lo = Infinity;
      let nh = 0;
      let nl = 0;
      for (let j = 0; j < zs.length; j++) {
        const v = zs[j][r];
        if (v !== v) continue;
        k++;
        s += v;
        if (v > hi) hi = v;
        if (v < lo) lo = v;
        if (v > h) nh++;
        if (v < -h) nl++;
      }
      const m = k > 0 ? s / k : NaN;
      let ss = 0;
      for (let j = 0; j < zs.length; j++) {
        const v = zs[j][r];
        if (v === v) ss += (v - m) * (v - m);
      }
      mean[i] = m;
      max[i] = k > 0 ? hi : NaN;
      min[i] = k > 0 ? lo : NaN;
      sd[i] = k > 0 ? Math.sqrt(ss / k) : NaN;
      high[i] = nh;
      low[i] = nl;
    }
    return [numeric('z_mean', mean), numeric('z_max', max), numeric('z_min', min), numeric('z_sd', sd), numeric('z_n_high', high), numeric('z_n_low', low)];
  },
};
