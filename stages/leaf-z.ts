/**
 * Puts every `<col>__bin` rate on one shared scale: `<col>__z` = (rate − μ) / σ, where μ and σ
 * are pooled over every column's bins, each bin weighted by its fit rows.
 *
 * Design choice: this is a separate, unsupervised stage that reads the `__bin` columns over the
 * fit rows instead of reading tree-bins' state. Weighting each leaf by its row count is the same
 * as pooling the per-row `__bin` values over the fit rows, so the runner's generic machinery
 * (inputs in, columns out) is enough. In a cross-fitted context the train-row `__bin` values are
 * out-of-fold encodings from several inner trees; the pooled scale is then that of the values
 * the learners actually see, which is the point of standardising. Rows whose raw value is
 * missing carry the missing bin's rate: they are scored but not pooled, so each `__bin` column is
 * consumed together with its raw column, whose NaNs mark those rows.
 *
 * Each `__z` replaces its `__bin` column for the learners (the raw column stays): z is an affine
 * map of the same column, so keeping both gives tree learners nothing and a linear learner an
 * exactly collinear pair per column, at a cost that grows with the square of the width.
 */
import { numeric, type Column, type FrameView } from '../pipeline/frame.js';
import type { FitInput, Stage } from './types.js';

export class LeafZError extends Error {
  constructor(
    message: string,
    readonly column: string,
  ) {
    super(`${message}: ${column}`);
    this.name = 'LeafZError';
  }
}

export type LeafZConfig = Record<string, never>;

export interface LeafZState {
  /** The raw columns whose `__bin` columns were pooled. */
  readonly columns: string[];
  readonly mean: number;
  /** Population standard deviation (ddof 0): the leaves are the whole pooled distribution. */
  readonly sd: number;
  /** Values pooled (non-missing fit rows summed over columns). */
  readonly n: number;
}

const BIN = '__bin';

export const leafZ: Stage<LeafZConfig, LeafZState> = {
  kind: 'leaf-z',
  version: 2,
  supervised: false,
  replacesInputs: false,

  replacedInputs(inputs: readonly string[]): string[] {
    return inputs.filter((name) => name.endsWith(BIN));
  },

  resolveConfig(raw: unknown): LeafZConfig {
    if (raw !== undefined && raw !== null && (typeof raw !== 'object' || Object.keys(raw).length > 0)) {
      throw new LeafZError('leaf-z takes no options', JSON.stringify(raw));
    }
    return {};
  },

  selectInputs(_config: LeafZConfig, available: readonly Column[]): string[] {
    const names = new Set(available.filter((c) => c.type === 'numeric').map((c) => c.name));
    const out: string[] = [];
    for (const name of names) {
      if (!name.endsWith(BIN)) continue;
      const raw = name.slice(0, -BIN.length);
      out.push(name);
      if (names.has(raw)) out.push(raw);
    }
    return out;
  },

  fit({ view, inputs }: FitInput<LeafZConfig>): LeafZState {
    const rows = view.rows;
    const columns = binnedColumns(inputs);
    // Two passes (mean, then squared deviations) rather than a running sum of squares, which
    // loses precision when the rates sit far from zero relative to their spread.
    let n = 0;
    let sum = 0;
    for (const col of columns) {
      const { bin, raw } = pair(view, col);
      for (let i = 0; i < rows.length; i++) {
        const r = rows[i];
        if (raw && raw[r] !== raw[r]) continue;
        sum += bin[r];
        n++;
      }
    }
    const mean = n > 0 ? sum / n : 0;
    let ss = 0;
    for (const col of columns) {
      const { bin, raw } = pair(view, col);
      for (let i = 0; i < rows.length; i++) {
        const r = rows[i];
        if (raw && raw[r] !== raw[r]) continue;
        const d = bin[r] - mean;
        ss += d * d;
      }
    }
    const sd = n > 0 ? Math.sqrt(ss / n) : 0;
    // A spread at rounding level (equal rates whose mean is not exactly representable) is no
    // spread: dividing by it would turn rounding noise into huge z values.
    return { columns, mean, sd: sd <= 1e-12 * Math.max(1, Math.abs(mean)) ? 0 : sd, n };
  },

  apply(state: LeafZState, view: FrameView): Column[] {
    const rows = view.rows;
    // σ = 0 means every pooled rate is equal: no spread to express, so every z is 0.
    const scale = state.sd > 0 ? 1 / state.sd : 0;
    return state.columns.map((col) => {
      const { bin } = pair(view, col);
      const out = new Float64Array(rows.length);
      if (scale > 0) for (let i = 0; i < rows.length; i++) out[i] = (bin[rows[i]] - state.mean) * scale;
      return numeric(`${col}__z`, out);
    });
  },
};

function binnedColumns(inputs: readonly string[]): string[] {
  return inputs.filter((n) => n.endsWith(BIN)).map((n) => n.slice(0, -BIN.length));
}

function pair(view: FrameView, col: string): { bin: Float64Array; raw: Float64Array | null } {
  const b = view.columns.get(col + BIN);
  if (!b || b.type !== 'numeric') throw new LeafZError('missing numeric input column', col + BIN);
  const r = view.columns.get(col);
  return { bin: b.values, raw: r && r.type === 'numeric' ? r.values : null };
}
