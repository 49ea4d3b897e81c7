/**
 * The `dates` stage: turns date columns into calendar parts a learner can use, and day counts
 * between pairs of dates. Unsupervised (never reads the target); the raw date columns it consumes
 * leave the feature set, because epoch days as a number mostly encode "when", which drifts.
 *
 * Holiday rules: `__days_to_holiday` is signed (see `daysToNearestHoliday`: positive = holiday
 * ahead) and measured to OBSERVED US federal holidays. `__holiday_season` is 1 when the date lies
 * within `holiday_window_days` days (either side, inclusive) of an observed federal holiday;
 * there is no separate end-of-year season rule.
 */
import { numeric, type Column, type DateColumn, type FrameView, type NumericColumn } from '../pipeline/frame.js';
import {
  civilInto,
  daysFromCivil,
  daysInMonth,
  daysToNearestHoliday,
  fiscalQuarter,
  isoStringFromDays,
  isoWeek,
  isoWeekday,
  quarterOfMonth,
} from './core/calendar.js';
import type { FitInput, Stage } from './types.js';

export interface DatesConfig {
  /** Date columns to split into parts; null = every date column available. */
  readonly columns: readonly string[] | null;
  /** First month (1..12) of the fiscal year for `__fiscal_quarter`. */
  readonly fiscal_start_month: number;
  /** A date column no other consumed date may exceed in the same row (leakage guard). */
  readonly as_of: string | null;
  /** [a, b] pairs: emits `<a>__to__<b>` = b − a in days. */
  readonly pairs: readonly (readonly [string, string])[];
  readonly holiday_window_days: number;
}

export interface DatesState {
  readonly columns: string[];
  readonly pairs: [string, string][];
  readonly asOf: string | null;
  /** The consumed date columns compared against `asOf`. */
  readonly checked: string[];
  readonly fiscalStartMonth: number;
  readonly holidayWindowDays: number;
}

/** Suffixes of the per-column outputs, in output order. */
export const DATE_PART_SUFFIXES = [
  'day',
  'weekday',
  'weekend',
  'isoweek',
  'month',
  'quarter',
  'doy',
  'month_end',
  'quarter_end',
  'year_end',
  'fiscal_quarter',
  'days_to_holiday',
  'holiday_season',
] as const;

/** A config value names a column that is not there, or is not a date column. */
export class DatesConfigError extends Error {
  constructor(
    readonly field: 'columns' | 'pairs' | 'as_of',
    readonly column: string,
    readonly reason: 'unknown column' | 'not a date column',
  ) {
    super(`dates: ${field} names '${column}': ${reason}`);
    this.name = 'DatesConfigError';
  }
}

/**
 * A date later than the row's as-of date: the value was recorded after the decision it is meant
 * to inform, so using it would leak the future into the model. A data error, never repaired.
 */
export class DateLeakageError extends Error {
  constructor(
    readonly column: string,
    readonly asOfColumn: string,
    /** 0-based row index in the loaded data (the frame's index space). */
    readonly row: number,
    readonly date: string,
    readonly asOfDate: string,
  ) {
    super(
      `dates: row ${row}: ${column} = ${date} is later than the as_of date ${asOfColumn} = ${asOfDate} (target leakage)`,
    );
    this.name = 'DateLeakageError';
  }
}

const CONFIG_KEYS = new Set(['columns', 'fiscal_start_month', 'as_of', 'pairs', 'holiday_window_days']);

function resolveConfig(raw: unknown): DatesConfig {
  const src: Record<string, unknown> = raw === undefined || raw === null ? {} : asRecord(raw);
  for (const key of Object.keys(src)) {
    if (!CONFIG_KEYS.has(key)) throw new Error(`dates: unknown option '${key}'`);
  }
  const columns = src.columns === undefined || src.columns === null ? null : stringList(src.columns, 'columns');
  const fiscal = src.fiscal_start_month ?? 1;
  if (typeof fiscal !== 'number' || !Number.isInteger(fiscal) || fiscal < 1 || fiscal > 12) {
    throw new Error(`dates: fiscal_start_month must be an integer 1..12, got ${JSON.stringify(fiscal)}`);
  }
  const asOf = src.as_of ?? null;
  if (asOf !== null && typeof asOf !== 'string') throw new Error('dates: as_of must be a column name');
  const window = src.holiday_window_days ?? 7;
  if (typeof window !== 'number' || !Number.isInteger(window) || window < 0) {
    throw new Error(`dates: holiday_window_days must be a non-negative integer, got ${JSON.stringify(window)}`);
  }
  const pairsRaw = src.pairs ?? [];
  if (!Array.isArray(pairsRaw)) throw new Error('dates: pairs must be a list of [a, b] column pairs');
  const pairs = pairsRaw.map((p: unknown): [string, string] => {
    const pair = stringList(p, 'pairs');
    if (pair.length !== 2) throw new Error(`dates: each pair must be [a, b], got ${JSON.stringify(p)}`);
    return [pair[0], pair[1]];
  });
  return { columns, fiscal_start_month: fiscal, as_of: asOf, pairs, holiday_window_days: window };
}

function asRecord(raw: unknown): Record<string, unknown> {
  if (typeof raw !== 'object' || raw === null || Array.isArray(raw)) throw new Error('dates: options must be a mapping');
  return raw as Record<string, unknown>;
}

function stringList(v: unknown, field: string): string[] {
  if (!Array.isArray(v) || !v.every((s) => typeof s === 'string')) {
    throw new Error(`dates: ${field} must be a list of column names`);
  }
  return v as string[];
}

/** Every column the config names, each checked to exist and be a date column; in config order, deduplicated. */
function namedColumns(config: DatesConfig, isDate: (name: string) => boolean | undefined): string[] {
  const out: string[] = [];
  const add = (field: 'columns' | 'pairs' | 'as_of', name: string): void => {
    const kind = isDate(name);
    if (kind === undefined) throw new DatesConfigError(field, name, 'unknown column');
    if (!kind) throw new DatesConfigError(field, name, 'not a date column');
    if (!out.includes(name)) out.push(name);
  };
  for (const c of config.columns ?? []) add('columns', c);
  for (const [a, b] of config.pairs) {
    add('pairs', a);
    add('pairs', b);
  }
  if (config.as_of !== null) add('as_of', config.as_of);
  return out;
}

function selectInputs(config: DatesConfig, available: readonly Column[]): string[] {
  const byName = new Map(available.map((c) => [c.name, c]));
  const named = namedColumns(config, (n) => {
    const c = byName.get(n);
    return c === undefined ? undefined : c.type === 'date';
  });
  // With no explicit list every date column is consumed, which already covers pairs and as_of.
  return config.columns !== null ? named : available.filter((c) => c.type === 'date').map((c) => c.name);
}

function dateOf(view: FrameView, name: string, field: 'columns' | 'pairs' | 'as_of'): DateColumn {
  const c = view.columns.get(name);
  if (c === undefined) throw new DatesConfigError(field, name, 'unknown column');
  if (c.type !== 'date') throw new DatesConfigError(field, name, 'not a date column');
  return c;
}

function checkAsOf(state: DatesState, view: FrameView): void {
  if (state.asOf === null) return;
  const asOf = dateOf(view, state.asOf, 'as_of').days;
  const rows = view.rows;
  for (const name of state.checked) {
    const days = dateOf(view, name, 'columns').days;
    for (let i = 0; i < rows.length; i++) {
      const r = rows[i];
      // NaN on either side compares false: a missing date cannot be shown to leak.
      if (days[r] > asOf[r]) {
        throw new DateLeakageError(name, state.asOf, r, isoStringFromDays(days[r]), isoStringFromDays(asOf[r]));
      }
    }
  }
}

function fit(input: FitInput<DatesConfig>): DatesState {
  const config = input.config;
  const columns = config.columns === null ? [...input.inputs] : [...config.columns];
  const state: DatesState = {
    columns,
    pairs: config.pairs.map(([a, b]): [string, string] => [a, b]),
    asOf: config.as_of,
    checked: input.inputs.filter((n) => n !== config.as_of),
    fiscalStartMonth: config.fiscal_start_month,
    holidayWindowDays: config.holiday_window_days,
  };
  for (const c of columns) dateOf(input.view, c, 'columns');
  checkAsOf(state, input.view);
  return state;
}

function partColumns(name: string, days: Float64Array, rows: Uint32Array, state: DatesState): NumericColumn[] {
  const n = rows.length;
  const out = DATE_PART_SUFFIXES.map(() => new Float64Array(n));
  const [day, weekday, weekend, isoweek, month, quarter, doy, monthEnd, quarterEnd, yearEnd, fq, toHoliday, season] =
    out;
  const civil = new Int32Array(3);
  const window = state.holidayWindowDays;
  for (let i = 0; i < n; i++) {
    const d = days[rows[i]];
    if (Number.isNaN(d)) {
      for (let k = 0; k < out.length; k++) out[k][i] = NaN;
      continue;
    }
    civilInto(d, civil);
    const y = civil[0];
    const m = civil[1];
    const dd = civil[2];
    const wd = isoWeekday(d);
    const lastOfMonth = dd === daysInMonth(y, m);
    const toH = daysToNearestHoliday(d);
    day[i] = dd;
    weekday[i] = wd;
    weekend[i] = wd >= 6 ? 1 : 0;
    isoweek[i] = isoWeek(d);
    month[i] = m;
    quarter[i] = quarterOfMonth(m);
    doy[i] = d - daysFromCivil(y, 1, 1) + 1;
    monthEnd[i] = lastOfMonth ? 1 : 0;
    quarterEnd[i] = lastOfMonth && m % 3 === 0 ? 1 : 0;
    yearEnd[i] = lastOfMonth && m === 12 ? 1 : 0;
    fq[i] = fiscalQuarter(m, state.fiscalStartMonth);
    toHoliday[i] = toH;
    season[i] = Math.abs(toH) <= window ? 1 : 0;
  }
  return DATE_PART_SUFFIXES.map((suffix, k) => numeric(`${name}__${suffix}`, out[k]));
}

function apply(state: DatesState, view: FrameView): Column[] {
  checkAsOf(state, view);
  const rows = view.rows;
  const result: Column[] = [];
  for (const name of state.columns) result.push(...partColumns(name, dateOf(view, name, 'columns').days, rows, state));
  for (const [a, b] of state.pairs) {
    const da = dateOf(view, a, 'pairs').days;
    const db = dateOf(view, b, 'pairs').days;
    const gap = new Float64Array(rows.length);
    for (let i = 0; i < rows.length; i++) gap[i] = db[rows[i]] - da[rows[i]];
    result.push(numeric(`${a}__to__${b}`, gap));
  }
  return result;
}

export const datesStage: Stage<DatesConfig, DatesState> = {
  kind: 'dates',
  version: 1,
  supervised: false,
  replacesInputs: true,
  resolveConfig,
  selectInputs,
  fit,
  apply,
};
