/**
 * Exclusion rules: rows that must not take part in modeling at all (a product withdrawn, an
 * application channel since closed, records before a policy change). They remove rows before the
 * split, so this is not a Stage: the runner applies it once on the whole frame.
 *
 * Conventions:
 * - A rule has exactly one condition; a row is excluded when the condition is TRUE.
 * - `below` / `above` are strict (< and >).
 * - A missing value never satisfies `in`, `not_in`, `below` or `above` (as NULL in SQL): a rule
 *   meant to drop missing values must say `missing: true`, so that no rule drops them silently.
 * - Report counts are attributed to the first rule, in config order, that excludes a row: each
 *   rule's `rows`/`events` are the rows it excluded that no earlier rule had already excluded, so
 *   the report's rows add up to the total excluded.
 */
import type { Column, Frame } from '../pipeline/frame.js';
import { daysFromIsoString, isoStringFromDays } from './core/calendar.js';
import { editDistance } from './core/edit-distance.js';

export interface ExclusionRule {
  /** Why these rows are excluded, for the report. */
  reason: string;
  column: string;
  /** Exclude rows whose categorical level is one of these. */
  in?: string[];
  /** Exclude rows whose categorical level is none of these. */
  not_in?: string[];
  /** Exclude rows whose value is < this (epoch days when `dated`). */
  below?: number;
  /** Exclude rows whose value is > this (epoch days when `dated`). */
  above?: number;
  /** Exclude rows whose value is missing (only `true` is meaningful). */
  missing?: boolean;
  /**
   * Set by `resolveExclusions` when `below`/`above` was written as a `YYYY-MM-DD` date: the number
   * is then epoch days, and the rule may only be applied to a date column.
   */
  dated?: boolean;
}

export interface ExclusionReportRow {
  reason: string;
  column: string;
  condition: string;
  /** Rows this rule excluded that no earlier rule had excluded. */
  rows: number;
  events: number;
  /** events / rows, or null when the rule excluded no new row. */
  event_rate: number | null;
}

export interface ExclusionResult {
  /** 1 = the row stays. */
  keep: Uint8Array;
  report: ExclusionReportRow[];
}

/** A rule that is malformed, or does not fit the column it names; `index` is its position in the list. */
export class ExclusionRuleError extends Error {
  constructor(
    message: string,
    readonly index: number,
    readonly field: string,
    readonly value: unknown,
  ) {
    super(message);
    this.name = 'ExclusionRuleError';
  }
}

/** A rule names a column the data does not have. */
export class ExclusionColumnError extends Error {
  constructor(
    message: string,
    readonly index: number,
    readonly column: string,
    /** The closest column name, when one is within a small edit distance. */
    readonly suggestion: string | null,
  ) {
    super(message);
    this.name = 'ExclusionColumnError';
  }
}

const CONDITIONS = ['in', 'not_in', 'below', 'above', 'missing'] as const;
type Condition = (typeof CONDITIONS)[number];
const KNOWN_KEYS: readonly string[] = ['reason', 'column', ...CONDITIONS];

/** Validates the raw `exclude:` list (absent = no rules). Date thresholds become epoch days. */
export function resolveExclusions(raw: unknown): ExclusionRule[] {
  if (raw === undefined || raw === null) return [];
  if (!Array.isArray(raw)) throw new ExclusionRuleError(`exclude: expected a list of rules, got ${JSON.stringify(raw)}`, -1, '', raw);
  return raw.map((item: unknown, index) => resolveRule(item, index));
}

function resolveRule(item: unknown, index: number): ExclusionRule {
  const where = `exclude[${index}]`;
  if (typeof item !== 'object' || item === null || Array.isArray(item)) {
    throw new ExclusionRuleError(`${where}: a rule must be a mapping, got ${JSON.stringify(item)}`, index, '', item);
  }
  const r = item as Record<string, unknown>;
  for (const key of Object.keys(r)) {
    if (!KNOWN_KEYS.includes(key)) {
      const hint = closest(key, KNOWN_KEYS);
      throw new ExclusionRuleError(
        `${where}: unknown key '${key}'${hint === null ? '' : ` (did you mean '${hint}'?)`}; known: ${KNOWN_KEYS.join(', ')}`,
        index,
        key,
        r[key],
      );
    }
  }
  if (typeof r.reason !== 'string' || r.reason.trim() === '') {
    throw new ExclusionRuleError(`${where}: 'reason' must be a non-empty text saying why the rows are excluded`, index, 'reason', r.reason);
  }
  if (typeof r.column !== 'string' || r.column === '') {
    throw new ExclusionRuleError(`${where}: 'column' must be a column name`, index, 'column', r.column);
  }
  const present = CONDITIONS.filter((c) => r[c] !== undefined);
  if (present.length !== 1) {
    throw new ExclusionRuleError(
      `${where}: a rule needs exactly one condition of ${CONDITIONS.join(', ')}; got ${present.length === 0 ? 'none' : present.join(', ')} (write one rule per condition)`,
      index,
      present.join(','),
      present.map((c) => r[c]),
    );
  }
  const cond: Condition = present[0];
  const value = r[cond];
  const rule: ExclusionRule = { reason: r.reason, column: r.column };
  switch (cond) {
    case 'in':
    case 'not_in': {
      if (!Array.isArray(value) || value.length === 0 || value.some((v) => typeof v !== 'string')) {
        throw new ExclusionRuleError(`${where}: '${cond}' must be a non-empty list of category levels (text)`, index, cond, value);
      }
      rule[cond] = [...(value as string[])];
      break;
    }
    case 'below':
    case 'above': {
      if (typeof value === 'number' && Number.isFinite(value)) {
        rule[cond] = value;
      } else if (typeof value === 'string') {
        const days = daysFromIsoString(value);
        if (Number.isNaN(days)) {
          throw new ExclusionRuleError(`${where}: '${cond}' must be a finite number or a YYYY-MM-DD date, got '${value}'`, index, cond, value);
        }
        rule[cond] = days;
        rule.dated = true;
      } else {
        throw new ExclusionRuleError(`${where}: '${cond}' must be a finite number or a YYYY-MM-DD date, got ${JSON.stringify(value)}`, index, cond, value);
      }
      break;
    }
    case 'missing': {
      if (value !== true) {
        throw new ExclusionRuleError(`${where}: 'missing' can only be true (it excludes rows where '${r.column}' is missing)`, index, cond, value);
      }
      rule.missing = true;
      break;
    }
  }
  return rule;
}

/**
 * Evaluates the rules in order over every row of the frame. Throws when a rule names a column the
 * frame lacks, uses a condition that does not fit the column's type, or lists a level the column
 * does not have (a misspelt level would otherwise exclude nothing, silently).
 */
export function applyExclusions(frame: Frame, rules: readonly ExclusionRule[]): ExclusionResult {
  const n = frame.nRows;
  const keep = new Uint8Array(n).fill(1);
  const target = frame.target;
  const report: ExclusionReportRow[] = rules.map((rule, index) => {
    const col = frame.columns.get(rule.column);
    if (!col) {
      const names = [...frame.columns.keys()];
      const suggestion = closest(rule.column, names);
      throw new ExclusionColumnError(
        `exclude[${index}] (${rule.reason}): no column '${rule.column}' in the data${suggestion === null ? '' : ` (did you mean '${suggestion}'?)`}`,
        index,
        rule.column,
        suggestion,
      );
    }
    const matches = matcher(rule, col, index);
    let rows = 0;
    let events = 0;
    for (let i = 0; i < n; i++) {
      if (keep[i] === 1 && matches(i)) {
        keep[i] = 0;
        rows++;
        events += target[i];
      }
    }
    return { reason: rule.reason, column: rule.column, condition: describeCondition(rule), rows, events, event_rate: rows > 0 ? events / rows : null };
  });
  return { keep, report };
}

function matcher(rule: ExclusionRule, col: Column, index: number): (row: number) => boolean {
  const where = `exclude[${index}] (${rule.reason})`;
  // Rules built in code skip resolveExclusions, so the one-condition rule is enforced here too.
  const present = CONDITIONS.filter((c) => rule[c] !== undefined);
  if (present.length !== 1 || (rule.missing !== undefined && rule.missing !== true)) {
    throw new ExclusionRuleError(`${where}: a rule needs exactly one condition of ${CONDITIONS.join(', ')} (missing only as true)`, index, present.join(','), rule);
  }
  if (rule.missing === true) {
    switch (col.type) {
      case 'numeric': {
        const v = col.values;
        return (i) => Number.isNaN(v[i]);
      }
      case 'date': {
        const d = col.days;
        return (i) => Number.isNaN(d[i]);
      }
      case 'categorical': {
        const c = col.codes;
        return (i) => c[i] < 0;
      }
    }
  }
  const listed = rule.in ?? rule.not_in;
  if (listed !== undefined) {
    const field = rule.in !== undefined ? 'in' : 'not_in';
    if (col.type !== 'categorical') {
      throw new ExclusionRuleError(`${where}: '${field}' needs a categorical column; '${col.name}' is ${col.type} (use below/above)`, index, field, listed);
    }
    const hit = new Uint8Array(col.levels.length);
    for (const level of listed) {
      const k = col.levels.indexOf(level);
      if (k < 0) {
        const hint = closest(level, col.levels);
        throw new ExclusionRuleError(
          `${where}: '${level}' is not a level of '${col.name}'${hint === null ? '' : ` (did you mean '${hint}'?)`}`,
          index,
          field,
          level,
        );
      }
      hit[k] = 1;
    }
    const codes = col.codes;
    const want = rule.in !== undefined ? 1 : 0;
    return (i) => codes[i] >= 0 && hit[codes[i]] === want;
  }
  const field = rule.below !== undefined ? 'below' : 'above';
  const threshold = (rule.below ?? rule.above) as number;
  if (col.type === 'categorical') {
    throw new ExclusionRuleError(`${where}: '${field}' needs a numeric or date column; '${col.name}' is categorical (use in/not_in)`, index, field, threshold);
  }
  if (col.type === 'date' && rule.dated !== true) {
    throw new ExclusionRuleError(`${where}: '${col.name}' is a date column; write '${field}' as a YYYY-MM-DD date`, index, field, threshold);
  }
  if (col.type === 'numeric' && rule.dated === true) {
    throw new ExclusionRuleError(`${where}: '${col.name}' is numeric but '${field}' is a date`, index, field, threshold);
  }
  const v = col.type === 'date' ? col.days : col.values;
  // NaN compares false both ways, which is the "missing never matches" convention.
  return field === 'below' ? (i) => v[i] < threshold : (i) => v[i] > threshold;
}

function describeCondition(rule: ExclusionRule): string {
  if (rule.missing === true) return 'missing';
  if (rule.in !== undefined) return `in [${rule.in.join(', ')}]`;
  if (rule.not_in !== undefined) return `not in [${rule.not_in.join(', ')}]`;
  const field = rule.below !== undefined ? 'below' : 'above';
  const t = (rule.below ?? rule.above) as number;
  return `${field} ${rule.dated === true ? isoStringFromDays(t) : String(t)}`;
}

/** Suggestions within this many edits are close enough to be a likely typo (common practice, no source). */
const MAX_SUGGESTION_DISTANCE = 2;

/** The candidate nearest to `word` by Levenshtein distance, if within MAX_SUGGESTION_DISTANCE. */
function closest(word: string, candidates: readonly string[]): string | null {
  let best: string | null = null;
  let bestDistance = MAX_SUGGESTION_DISTANCE + 1;
  for (const c of candidates) {
    const d = editDistance(word.toLowerCase(), c.toLowerCase());
    if (d < bestDistance) {
      best = c;
      bestDistance = d;
    }
  }
  return best;
}
