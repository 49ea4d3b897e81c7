/**
 * Tree binning: one univariate Gini tree per numeric column, fit on the rows where the column
 * is present; its leaves become intervals and each row gets its interval's smoothed event rate
 * as `<col>__bin`. A missing value is its own bin. Raw columns still pass through to learners.
 */
import { numeric, type Column, type FrameView } from '../pipeline/frame.js';
import { mEstimate } from './core/smoothing.js';
import { edgeSampleRows } from './core/tree/bin.js';
import { TreeParamError } from './core/tree/errors.js';
import { mergeMonotone, type Direction } from './core/tree/monotone.js';
import { fitIntervalTree, type IntervalBins } from './core/tree/univariate.js';
import type { FitInput, Json, Stage, StageReport } from './types.js';

export type Monotone = 'auto' | 'up' | 'down' | 'none';

export interface TreeBinsConfig {
  readonly max_depth: number;
  /** Minimum rows per leaf: a count when >= 1, else a fraction of the column's non-missing fit rows. */
  readonly min_leaf: number;
  /** m of the m-estimate toward the fit prior. */
  readonly smoothing: number;
  /** Columns to bin; null = every numeric column. */
  readonly columns: readonly string[] | null;
  readonly monotone: Monotone;
  /** Quantile bins per column before the tree is grown; exact on columns with at most this many distinct values. */
  readonly max_bins: number;
}

export interface BinStat {
  readonly interval: string;
  readonly n: number;
  readonly events: number;
  /** The smoothed event rate this bin emits. */
  readonly rate: number;
}

export interface TreeBinsColumn {
  readonly column: string;
  /** Ascending cut points; x <= thresholds[k] falls in bin k or lower. */
  readonly thresholds: number[];
  readonly bins: BinStat[];
  readonly missing: BinStat;
}

export interface TreeBinsState {
  /** Event rate over all fit rows: what every bin is shrunk toward. */
  readonly prior: number;
  readonly columns: TreeBinsColumn[];
}

const DEFAULTS: TreeBinsConfig = {
  max_depth: 3,
  // 5% of rows per bin: common practice in scorecard binning, no source.
  min_leaf: 0.05,
  smoothing: 20,
  columns: null,
  monotone: 'none',
  max_bins: 255,
};

const KEYS = new Set(Object.keys(DEFAULTS));

export const treeBins: Stage<TreeBinsConfig, TreeBinsState> = {
  kind: 'tree-bins',
  version: 3,
  supervised: true,
  replacesInputs: false,

  resolveConfig(raw: unknown): TreeBinsConfig {
    const r = raw === undefined || raw === null ? {} : raw;
    if (typeof r !== 'object' || Array.isArray(r)) throw new TreeParamError('tree-bins config must be a mapping', 'tree-bins', raw);
    const o = r as Record<string, unknown>;
    for (const k of Object.keys(o)) if (!KEYS.has(k)) throw new TreeParamError('unknown tree-bins option', k, o[k]);
    const cfg = { ...DEFAULTS, ...o } as Record<string, unknown>;
    const maxDepth = cfg.max_depth;
    if (typeof maxDepth !== 'number' || !Number.isInteger(maxDepth) || maxDepth < 1 || maxDepth > 16) {
      throw new TreeParamError('max_depth must be an integer in [1, 16]', 'max_depth', maxDepth);
    }
    const minLeaf = cfg.min_leaf;
    if (typeof minLeaf !== 'number' || !(minLeaf > 0) || (minLeaf >= 1 && !Number.isInteger(minLeaf))) {
      throw new TreeParamError('min_leaf must be a fraction in (0, 1) or an integer count >= 1', 'min_leaf', minLeaf);
    }
    const m = cfg.smoothing;
    if (typeof m !== 'number' || !(m >= 0) || !Number.isFinite(m)) throw new TreeParamError('smoothing must be a finite number >= 0', 'smoothing', m);
    const cols = cfg.columns;
    if (cols !== null && (!Array.isArray(cols) || !cols.every((c) => typeof c === 'string'))) {
      throw new TreeParamError('columns must be a list of column names', 'columns', cols);
    }
    const mono = cfg.monotone;
    if (mono !== 'auto' && mono !== 'up' && mono !== 'down' && mono !== 'none') {
      throw new TreeParamError('monotone must be auto, up, down or none', 'monotone', mono);
    }
    const maxBins = cfg.max_bins;
    if (typeof maxBins !== 'number' || !Number.isInteger(maxBins) || maxBins < 2 || maxBins > 65535) {
      throw new TreeParamError('max_bins must be an integer in [2, 65535]', 'max_bins', maxBins);
    }
    return { max_depth: maxDepth, min_leaf: minLeaf, smoothing: m, columns: cols as string[] | null, monotone: mono, max_bins: maxBins };
  },

  selectInputs(config: TreeBinsConfig, available: readonly Column[]): string[] {
    const numericNames = available.filter((c) => c.type === 'numeric').map((c) => c.name);
    if (config.columns === null) return numericNames;
    const have = new Set(numericNames);
    for (const c of config.columns) if (!have.has(c)) throw new TreeParamError('tree-bins column is not an available numeric column', 'columns', c);
    return config.columns.slice();
  },

  fit({ view, target, inputs, config }: FitInput<TreeBinsConfig>): TreeBinsState {
    const rows = view.rows;
    let totalEv = 0;
    for (let i = 0; i < rows.length; i++) totalEv += target[rows[i]];
    const prior = rows.length > 0 ? totalEv / rows.length : 0;
    const present = new Uint32Array(rows.length);
    // Every column's edge sample comes from the rows a fit on the fewest present rows can pick.
    let fewest = rows.length;
    for (const name of inputs) {
      const x = numericValues(view, name);
      let k = 0;
      for (let i = 0; i < rows.length; i++) if (x[rows[i]] === x[rows[i]]) k++;
      fewest = Math.min(fewest, k);
    }
    const sampleFrom = edgeSampleRows(rows, fewest);
    const columns = inputs.map((name): TreeBinsColumn => {
      const x = numericValues(view, name);
      let nPresent = 0;
      let missN = 0;
      let missEv = 0;
      for (let i = 0; i < rows.length; i++) {
        const r = rows[i];
        if (x[r] === x[r]) present[nPresent++] = r;
        else {
          missN++;
          missEv += target[r];
        }
      }
      const fitRows = present.subarray(0, nPresent);
      const minLeafCount = config.min_leaf < 1 ? Math.max(1, Math.ceil(config.min_leaf * nPresent)) : config.min_leaf;
      const fitted = fitIntervalTree(x, target, fitRows, { maxDepth: config.max_depth, minLeafCount, maxBins: config.max_bins }, sampleFrom);
      const dir: Direction | null = config.monotone === 'none' ? null : config.monotone === 'auto' ? fitted.trend : config.monotone;
      const bins = dir === null ? fitted.bins : mergeMonotone(fitted.bins, dir);
      return {
        column: name,
        thresholds: bins.thresholds,
        bins: binStats(bins, prior, config.smoothing),
        missing: {
          interval: 'missing',
          n: missN,
          events: missEv,
          rate: missN > 0 ? mEstimate(missEv, missN, prior, config.smoothing) : prior,
        },
      };
    });
    return { prior, columns };
  },

  apply(state: TreeBinsState, view: FrameView): Column[] {
    const rows = view.rows;
    return state.columns.map((c) => {
      const x = numericValues(view, c.column);
      const t = c.thresholds;
      const rate = Float64Array.from(c.bins, (b) => b.rate);
      const out = new Float64Array(rows.length);
      for (let i = 0; i < rows.length; i++) {
        const v = x[rows[i]];
        if (v !== v) {
          out[i] = c.missing.rate;
          continue;
        }
        let lo = 0;
        let hi = t.length;
        while (lo < hi) {
          const mid = (lo + hi) >>> 1;
          if (t[mid] < v) lo = mid + 1;
          else hi = mid;
        }
        out[i] = rate[lo];
      }
      return numeric(`${c.column}__bin`, out);
    });
  },

  describe(state: TreeBinsState): StageReport {
    const rows: (string | number)[][] = [];
    const iv: { [col: string]: Json } = {};
    for (const c of state.columns) {
      const all = c.missing.n > 0 ? [...c.bins, c.missing] : c.bins;
      const woe = weightOfEvidence(all);
      all.forEach((b, k) => {
        const w = woe.woe[k];
        const term = woe.ivTerm[k];
        rows.push([c.column, k < c.bins.length ? k : 'missing', b.interval, b.n, b.events, b.n > 0 ? b.events / b.n : '', b.rate, Number.isFinite(w) ? w : '', Number.isFinite(term) ? term : '']);
      });
      iv[c.column] = Number.isFinite(woe.iv) ? woe.iv : null;
    }
    return {
      tables: { bins: { header: ['column', 'bin', 'interval', 'n', 'events', 'event_rate', 'rate', 'woe', 'iv'], rows } },
      metrics: { iv },
    };
  },
};

/**
 * Weight of evidence and information value as used in credit scoring.
 * SIGN CONVENTION: WoE_k = ln(share of non-events in bin k / share of events in bin k), so a bin
 * safer than the population has positive WoE; IV = Σ_k (share non-events_k − share events_k)·WoE_k
 * (Kullback's divergence J between the two class distributions; oracle woe_iv_credit_tree_bins.json).
 * No zero-count adjustment is applied (the oracle applies none): a bin with no events or no
 * non-events has an infinite WoE, reported as empty, and makes the column's IV infinite (null).
 */
export function weightOfEvidence(bins: readonly { n: number; events: number }[]): { woe: number[]; ivTerm: number[]; iv: number } {
  let ev = 0;
  let non = 0;
  for (const b of bins) {
    ev += b.events;
    non += b.n - b.events;
  }
  const woe: number[] = [];
  const ivTerm: number[] = [];
  let iv = 0;
  for (const b of bins) {
    const se = b.events / ev;
    const sn = (b.n - b.events) / non;
    const w = Math.log(sn / se);
    const term = se === sn ? 0 : (sn - se) * w;
    woe.push(w);
    ivTerm.push(term);
    iv += term;
  }
  return { woe, ivTerm, iv };
}

function binStats(bins: IntervalBins, prior: number, m: number): BinStat[] {
  const t = bins.thresholds;
  return bins.n.map((n, k) => ({
    interval: `(${k === 0 ? '-inf' : t[k - 1]}, ${k === t.length ? '+inf)' : `${t[k]}]`}`,
    n,
    events: bins.events[k],
    rate: mEstimate(bins.events[k], n, prior, m),
  }));
}

function numericValues(view: FrameView, name: string): Float64Array {
  const c = view.columns.get(name);
  if (!c || c.type !== 'numeric') throw new TreeParamError('tree-bins input is not a numeric column', 'column', name);
  return c.values;
}
