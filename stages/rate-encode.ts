/**
 * `rate-encode`: replaces each categorical column by the smoothed event rate of its level over the
 * fit rows (m-estimate towards the fit rows' overall rate). It reads the target, so the runner
 * cross-fits it: no row's encoding ever used that row's own outcome.
 *
 * The state is keyed by level text, not code: another data file (new applications at scoring time)
 * codes its levels in its own order. Missing values form their own category; a level the fit never
 * saw gets the prior.
 */
import { numeric, type CategoricalColumn, type Column, type FrameView } from '../pipeline/frame.js';
import { mEstimate } from './core/smoothing.js';
import type { FitInput, Stage, StageReport } from './types.js';

export interface RateEncodeConfig {
  /** m of the m-estimate: how many prior-rate rows each level's rate is shrunk with. */
  readonly smoothing: number;
  /** Columns to encode; every available categorical column when absent. */
  readonly columns?: readonly string[];
}

export interface RateEncodeColumnState {
  readonly name: string;
  /** Levels seen in the fit rows, sorted by text. */
  readonly levels: readonly string[];
  readonly rates: readonly number[];
  readonly n: readonly number[];
  readonly events: readonly number[];
  /** Smoothed rate of the missing rows, or the prior when the fit had none. */
  readonly missingRate: number;
  readonly missingN: number;
  readonly missingEvents: number;
}

export interface RateEncodeState {
  /** Event rate over the fit rows. */
  readonly prior: number;
  readonly m: number;
  readonly columns: readonly RateEncodeColumnState[];
}

/** A config value or column choice the stage cannot use; `key` names the option. */
export class RateEncodeConfigError extends Error {
  constructor(
    message: string,
    readonly key: string,
    readonly value: unknown,
  ) {
    super(message);
    this.name = 'RateEncodeConfigError';
  }
}

/** The view lacks a column the stage was told to read, or it is not categorical. */
export class RateEncodeInputError extends Error {
  constructor(
    message: string,
    readonly column: string,
  ) {
    super(message);
    this.name = 'RateEncodeInputError';
  }
}

const DEFAULT_SMOOTHING = 20;
const MISSING_LABEL = '(missing)';

export const rateEncode: Stage<RateEncodeConfig, RateEncodeState> = {
  kind: 'rate-encode',
  version: 1,
  supervised: true,
  replacesInputs: true,

  resolveConfig(raw: unknown): RateEncodeConfig {
    if (raw === undefined || raw === null) return { smoothing: DEFAULT_SMOOTHING };
    if (typeof raw !== 'object' || Array.isArray(raw)) {
      throw new RateEncodeConfigError(`rate-encode: config must be a mapping, got ${JSON.stringify(raw)}`, '', raw);
    }
    const r = raw as Record<string, unknown>;
    for (const key of Object.keys(r)) {
      if (key !== 'smoothing' && key !== 'columns') {
        throw new RateEncodeConfigError(`rate-encode: unknown option '${key}' (known: smoothing, columns)`, key, r[key]);
      }
    }
    const m = r.smoothing ?? DEFAULT_SMOOTHING;
    if (typeof m !== 'number' || !Number.isFinite(m) || m < 0) {
      throw new RateEncodeConfigError(`rate-encode: smoothing must be a finite number ≥ 0, got ${JSON.stringify(m)}`, 'smoothing', m);
    }
    if (r.columns === undefined) return { smoothing: m };
    const cols = r.columns;
    if (!Array.isArray(cols) || cols.some((c) => typeof c !== 'string')) {
      throw new RateEncodeConfigError(`rate-encode: columns must be a list of column names, got ${JSON.stringify(cols)}`, 'columns', cols);
    }
    return { smoothing: m, columns: [...(cols as string[])] };
  },

  selectInputs(config: RateEncodeConfig, available: readonly Column[]): string[] {
    if (!config.columns) return available.filter((c) => c.type === 'categorical').map((c) => c.name);
    return config.columns.map((name) => {
      const col = available.find((c) => c.name === name);
      if (!col) throw new RateEncodeConfigError(`rate-encode: column '${name}' is not an available feature`, 'columns', name);
      if (col.type !== 'categorical') {
        throw new RateEncodeConfigError(`rate-encode: column '${name}' is ${col.type}, not categorical`, 'columns', name);
      }
      return name;
    });
  },

  fit({ view, target, inputs, config }: FitInput<RateEncodeConfig>): RateEncodeState {
    const rows = view.rows;
    let events = 0;
    for (let i = 0; i < rows.length; i++) events += target[rows[i]];
    // With no fit rows there is no rate to shrink towards; 0 keeps the state finite and JSON-safe.
    const prior = rows.length > 0 ? events / rows.length : 0;
    const m = config.smoothing;
    const columns = inputs.map((name) => fitColumn(categoricalInput(view, name), rows, target, prior, m));
    return { prior, m, columns };
  },

  apply(state: RateEncodeState, view: FrameView, inputs: readonly string[]): Column[] {
    const rows = view.rows;
    return inputs.map((name) => {
      const cs = state.columns.find((c) => c.name === name);
      if (!cs) throw new RateEncodeInputError(`rate-encode: the fitted state has no column '${name}'`, name);
      const col = categoricalInput(view, name);
      const lookup = codeLookup(cs, col.levels, state.prior);
      const codes = col.codes;
      const out = new Float64Array(rows.length);
      const missingRate = cs.missingRate;
      for (let i = 0; i < rows.length; i++) {
        const code = codes[rows[i]];
        out[i] = code < 0 ? missingRate : lookup[code];
      }
      return numeric(`${name}__rate`, out);
    });
  },

  describe(state: RateEncodeState): StageReport {
    const rows: (string | number)[][] = [];
    for (const c of state.columns) {
      c.levels.forEach((level, k) => rows.push([c.name, level, c.n[k], c.events[k], c.rates[k]]));
      if (c.missingN > 0) rows.push([c.name, MISSING_LABEL, c.missingN, c.missingEvents, c.missingRate]);
    }
    return {
      tables: { rate_encode: { header: ['column', 'level', 'n', 'events', 'rate'], rows } },
      metrics: { prior: state.prior, m: state.m },
    };
  },
};

function fitColumn(col: CategoricalColumn, rows: Uint32Array, target: Uint8Array, prior: number, m: number): RateEncodeColumnState {
  const nLevels = col.levels.length;
  const counts = new Float64Array(nLevels);
  const hits = new Float64Array(nLevels);
  let missingN = 0;
  let missingEvents = 0;
  const codes = col.codes;
  for (let i = 0; i < rows.length; i++) {
    const r = rows[i];
    const code = codes[r];
    if (code < 0) {
      missingN++;
      missingEvents += target[r];
    } else {
      counts[code]++;
      hits[code] += target[r];
    }
  }
  const seen: number[] = [];
  for (let k = 0; k < nLevels; k++) if (counts[k] > 0) seen.push(k);
  const byText = (a: number, b: number): number => (col.levels[a] < col.levels[b] ? -1 : col.levels[a] > col.levels[b] ? 1 : 0);
  seen.sort(byText);
  return {
    name: col.name,
    levels: seen.map((k) => col.levels[k]),
    rates: seen.map((k) => mEstimate(hits[k], counts[k], prior, m)),
    n: seen.map((k) => counts[k]),
    events: seen.map((k) => hits[k]),
    missingRate: missingN > 0 ? mEstimate(missingEvents, missingN, prior, m) : prior,
    missingN,
    missingEvents,
  };
}

/** Rate per code of `levels` (the applying data's own coding); levels the fit never saw get the prior. */
function codeLookup(cs: RateEncodeColumnState, levels: readonly string[], prior: number): Float64Array {
  const byLevel = new Map<string, number>();
  cs.levels.forEach((level, k) => byLevel.set(level, cs.rates[k]));
  return Float64Array.from(levels, (level) => byLevel.get(level) ?? prior);
}

function categoricalInput(view: FrameView, name: string): CategoricalColumn {
  const col = view.columns.get(name);
  if (!col) throw new RateEncodeInputError(`rate-encode: column '${name}' is not in the data`, name);
  if (col.type !== 'categorical') throw new RateEncodeInputError(`rate-encode: column '${name}' is ${col.type}, not categorical`, name);
  return col;
}
