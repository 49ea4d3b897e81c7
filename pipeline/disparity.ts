/**
 * The disparity table: for each protected column, how often each group is selected at the review
 * budget, next to its event rate, and the ratio of its selection rate to the most-selected group's.
 * A ratio below 0.8 is flagged: the "four-fifths" rule of thumb of the EEOC Uniform Guidelines on
 * Employee Selection Procedures, 29 CFR 1607.4(D). It is a screening figure that says "look
 * here", not a legal finding: the guideline itself allows for sample size and practical
 * significance, and this table applies neither.
 *
 * "Selected" is score >= cut, where cut is the budget threshold the metrics report (`cut` of the
 * stack's MetricSet: the inclusive selection, i.e. the tie block straddling the budget is taken
 * whole — what a score threshold actually does in use). With no tie at the cut this is exactly
 * the top `budget` share of rows that capture and precision are computed over.
 */
import type { CategoricalColumn } from './frame.js';

export const FOUR_FIFTHS = 0.8;

export const DISPARITY_NOTE =
  'Screening figure, not a legal finding: ratio = group selection rate / highest group selection rate at the budget cut; ' +
  'flag = ratio < 0.8, the four-fifths rule of thumb of the EEOC Uniform Guidelines (29 CFR 1607.4(D)). ' +
  'No allowance is made for group size or sampling error.';

/** The label of the group of rows whose protected value is missing. */
export const MISSING_GROUP = '(missing)';

export interface DisparityGroup {
  readonly group: string;
  readonly n: number;
  /** Share of the group's rows with score >= cut. */
  readonly selected_share: number;
  /** Share of the group's rows with the event. */
  readonly event_rate: number;
  /** selected_share / the largest selected_share of any group in the column; null when no group has a selected row. */
  readonly ratio: number | null;
  /** ratio < 0.8. */
  readonly flag: boolean;
}

export interface DisparityColumn {
  readonly column: string;
  readonly groups: readonly DisparityGroup[];
}

export interface DisparityTable {
  readonly budget: number;
  readonly cut: number;
  readonly note: string;
  readonly columns: readonly DisparityColumn[];
}

export interface DisparityInput {
  readonly budget: number;
  /** Rows with score >= cut are selected. */
  readonly cut: number;
  /** Protected columns over the full frame (codes indexed by frame row). */
  readonly columns: readonly CategoricalColumn[];
  /** Frame rows the table covers (e.g. the holdout rows). */
  readonly rows: Uint32Array;
  /** Scores aligned with `rows` (scores[i] belongs to frame row rows[i]). */
  readonly scores: Float64Array;
  /** Full-length 0/1 target, indexed by frame row. */
  readonly target: Uint8Array;
}

export class DisparityInputError extends Error {
  constructor(message: string, readonly detail: Readonly<Record<string, number | string>>) {
    super(message);
    this.name = 'DisparityInputError';
  }
}

export function disparityTable(input: DisparityInput): DisparityTable {
  if (input.scores.length !== input.rows.length) {
    throw new DisparityInputError('scores and rows differ in length', { scores: input.scores.length, rows: input.rows.length });
  }
  if (!Number.isFinite(input.cut)) throw new DisparityInputError('the cut must be a finite number', { cut: String(input.cut) });
  return {
    budget: input.budget,
    cut: input.cut,
    note: DISPARITY_NOTE,
    columns: input.columns.map((c) => columnTable(c, input)),
  };
}

function columnTable(column: CategoricalColumn, input: DisparityInput): DisparityColumn {
  const k = column.levels.length;
  // Slot k counts rows whose value is missing (code -1).
  const n = new Float64Array(k + 1);
  const selected = new Float64Array(k + 1);
  const events = new Float64Array(k + 1);
  const { rows, scores, target, cut } = input;
  for (let i = 0; i < rows.length; i++) {
    const r = rows[i];
    const code = column.codes[r];
    const g = code < 0 ? k : code;
    n[g]++;
    if (scores[i] >= cut) selected[g]++;
    events[g] += target[r];
  }
  let best = 0;
  for (let g = 0; g <= k; g++) if (n[g] > 0) best = Math.max(best, selected[g] / n[g]);
  const groups: DisparityGroup[] = [];
  for (let g = 0; g <= k; g++) {
    if (n[g] === 0) continue;
    const share = selected[g] / n[g];
    const ratio = best > 0 ? share / best : null;
    groups.push({
      group: g === k ? MISSING_GROUP : column.levels[g],
      n: n[g],
      selected_share: share,
      event_rate: events[g] / n[g],
      ratio,
      flag: ratio !== null && ratio < FOUR_FIFTHS,
    });
  }
  return { column: column.name, groups };
}
