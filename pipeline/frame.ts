/**
 * The columnar data model shared by the runner and every stage.
 *
 * Numeric and date columns are Float64Array (NaN = missing; dates are epoch days, UTC).
 * Categorical columns are Int32Array codes into `levels` (-1 = missing).
 * The target is a Uint8Array of 0/1. Row subsets are index arrays, never copies of rows.
 */

export type ColumnType = 'numeric' | 'categorical' | 'date';

/** What a column is for. Only `feature` and `date` columns ever reach a stage as inputs. */
export type Role = 'target' | 'id' | 'feature' | 'date' | 'weight' | 'protected' | 'ignore';

export interface NumericColumn {
  readonly type: 'numeric';
  readonly name: string;
  readonly values: Float64Array;
}

export interface CategoricalColumn {
  readonly type: 'categorical';
  readonly name: string;
  readonly codes: Int32Array;
  readonly levels: readonly string[];
}

export interface DateColumn {
  readonly type: 'date';
  readonly name: string;
  /** Days since 1970-01-01 (UTC); NaN = missing. */
  readonly days: Float64Array;
}

export type Column = NumericColumn | CategoricalColumn | DateColumn;

/** A loaded data set. `columns` holds every non-target, non-id column, in file order. */
export interface Frame {
  readonly nRows: number;
  readonly columns: ReadonlyMap<string, Column>;
  readonly roles: ReadonlyMap<string, Role>;
  /** 0/1 per row; 1 = the event (config `data.positive`). */
  readonly target: Uint8Array;
  /** The id column's raw text per row (row number as text when no id column is configured). */
  readonly ids: readonly string[];
  /** The label that was mapped to 1 and the one mapped to 0, as they appear in the file. */
  readonly targetLabels: { readonly positive: string; readonly negative: string };
}

/**
 * A view over columns whose arrays share one index space: `rows` picks the rows the view covers.
 * A stage's `apply` returns columns of length `rows.length`, in `rows` order.
 */
export interface FrameView {
  readonly columns: ReadonlyMap<string, Column>;
  readonly rows: Uint32Array;
}

export function numeric(name: string, values: Float64Array): NumericColumn {
  return { type: 'numeric', name, values };
}

export function categorical(name: string, codes: Int32Array, levels: readonly string[]): CategoricalColumn {
  return { type: 'categorical', name, codes, levels };
}

export function dateColumn(name: string, days: Float64Array): DateColumn {
  return { type: 'date', name, days };
}

/** Number of entries in a column's backing array. */
export function columnLength(c: Column): number {
  switch (c.type) {
    case 'numeric':
      return c.values.length;
    case 'categorical':
      return c.codes.length;
    case 'date':
      return c.days.length;
  }
}

/** A copy of `values` at `rows`, in `rows` order (for outputs and metrics, which need compact arrays). */
export function gather<T extends Float64Array | Int32Array | Uint8Array>(values: T, rows: Uint32Array): T {
  const out = new (values.constructor as new (n: number) => T)(rows.length);
  for (let i = 0; i < rows.length; i++) out[i] = values[rows[i]];
  return out;
}
