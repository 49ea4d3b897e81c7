/**
 * Loads a CSV file into the columnar `Frame`, in two streaming passes over the file.
 *
 * Pass 1 checks the shape (field counts, target values, ids) and infers the type of every
 * undeclared column without keeping its cells; pass 2 parses the cells straight into typed arrays
 * sized by pass 1's row count. Only ids and categorical levels are kept as strings. Both passes
 * hash the bytes, and a mismatch means the file changed in between.
 *
 * Rules: a cell is missing when, with surrounding whitespace trimmed, it is empty or equal to one
 * of `spec.missing`. An undeclared column is numeric when every non-missing cell is a plain decimal
 * number, a date when every one is an ISO 8601 calendar date that exists, else categorical (an
 * all-missing column counts as numeric). Categorical levels keep the cell text untrimmed, in order
 * of first appearance. Target values are compared trimmed.
 */
import {
  categorical,
  dateColumn,
  numeric,
  type Column,
  type ColumnType,
  type Frame,
  type Role,
} from '../frame.js';
import { editDistance } from '../config/suggest.js';
import { CsvSource, type CsvReadOptions, type CsvRecord } from './csv-reader.js';
import { CsvError, quoteText } from './csv-error.js';
import { isNonFiniteToken, parseDecimal, parseIsoDate } from './cells.js';

export type ColumnDecl = 'numeric' | 'categorical' | 'date' | 'ignore' | 'protected';

export interface DataSpec {
  /** Name of the 0/1 outcome column. */
  target: string;
  /** The target label that means the event (mapped to 1); absent = the target is written 0/1. */
  positive?: string;
  /** Name of the row id column; absent = ids are 1-based data row numbers. */
  id?: string;
  columns: ReadonlyMap<string, ColumnDecl>;
  /** Cell texts (compared after trimming) that mean "missing", besides the empty cell. */
  missing: readonly string[];
}

export interface LoadedData {
  frame: Frame;
  /** sha256 hex of the file bytes. */
  digest: string;
  /** Every header name, in file order (ignored columns included). */
  header: string[];
  /** The type each loaded column ended up with, declared or inferred. */
  inferred: ReadonlyMap<string, ColumnType>;
}

const BAD_CELL_HINT = 'add it to data.missing or declare the column categorical';
const TARGET_HINT = 'set data.positive to the label that means the event';
const MAX_LISTED_VALUES = 10;
const MAX_SUGGESTION_DISTANCE = 2;
/** V8 keeps a substring of 13+ characters as a view into its parent (here a whole read chunk). */
const SLICED_STRING_MIN_LENGTH = 13;

/**
 * A copy of `s` that does not pin the chunk it was sliced from: ids and levels outlive the chunk.
 * Concatenation makes a fresh flat string, and the slice of it keeps only that.
 */
function detach(s: string): string {
  return s.length < SLICED_STRING_MIN_LENGTH ? s : (' ' + s).slice(1);
}

function trimCell(s: string): string {
  const n = s.length;
  if (n === 0) return s;
  return s.charCodeAt(0) <= 32 || s.charCodeAt(n - 1) <= 32 ? s.trim() : s;
}

/** Decides missingness on trimmed text; the set lookup is skipped for texts longer than any token. */
class MissingTokens {
  private readonly tokens: ReadonlySet<string>;
  private readonly maxLength: number;

  constructor(tokens: readonly string[]) {
    const trimmed = tokens.map((t) => t.trim());
    this.tokens = new Set(trimmed);
    this.maxLength = trimmed.reduce((m, t) => Math.max(m, t.length), 0);
  }

  has(trimmed: string): boolean {
    return trimmed === '' || (trimmed.length <= this.maxLength && this.tokens.has(trimmed));
  }
}

interface LoadedColumn {
  readonly index: number;
  readonly name: string;
  readonly decl: Exclude<ColumnDecl, 'ignore'> | undefined;
}

interface Layout {
  readonly header: string[];
  readonly headerLine: number;
  readonly targetIndex: number;
  readonly idIndex: number;
  /** Feature, date and protected columns in file order (not target, id or ignored). */
  readonly loaded: readonly LoadedColumn[];
}

function unknownName(file: string, header: CsvRecord, name: string, what: string): CsvError {
  const lower = name.toLowerCase();
  let suggestion = header.fields.find((h) => h.toLowerCase() === lower);
  if (suggestion === undefined) {
    let best = MAX_SUGGESTION_DISTANCE + 1;
    for (const h of header.fields) {
      const d = editDistance(name, h);
      if (d < best) {
        best = d;
        suggestion = h;
      }
    }
  }
  const listed = header.fields.slice(0, 50).map(quoteText).join(', ');
  const more = header.fields.length > 50 ? `, ... (${header.fields.length} columns)` : '';
  return new CsvError({
    file,
    line: header.line,
    column: 0,
    expected: `a column named ${quoteText(name)} (${what})`,
    found: 'no such column in the header',
    hint: `${suggestion === undefined ? '' : `did you mean ${quoteText(suggestion)}? `}the header has: ${listed}${more}`,
  });
}

function resolveLayout(file: string, header: CsvRecord, spec: DataSpec): Layout {
  const position = new Map<string, number>();
  header.fields.forEach((name, i) => position.set(name, i));
  const targetIndex = position.get(spec.target);
  if (targetIndex === undefined) throw unknownName(file, header, spec.target, 'data.target');
  let idIndex = -1;
  if (spec.id !== undefined) {
    const found = position.get(spec.id);
    if (found === undefined) throw unknownName(file, header, spec.id, 'data.id');
    if (found === targetIndex) {
      throw new CsvError({
        file,
        line: header.line,
        column: found + 1,
        columnName: spec.id,
        expected: 'different columns for data.id and data.target',
        found: 'the same column for both',
        hint: 'point data.id at the row identifier column',
      });
    }
    idIndex = found;
  }
  for (const [name, decl] of spec.columns) {
    const at = position.get(name);
    if (at === undefined) throw unknownName(file, header, name, `data.columns: ${decl}`);
    if ((at === targetIndex || at === idIndex) && (decl === 'ignore' || decl === 'protected')) {
      throw new CsvError({
        file,
        line: header.line,
        column: at + 1,
        columnName: name,
        expected: `no "${decl}" declaration for the ${at === targetIndex ? 'target' : 'id'} column`,
        found: decl,
        hint: `remove "${name}" from data.columns`,
      });
    }
  }
  const loaded: LoadedColumn[] = [];
  header.fields.forEach((name, index) => {
    if (index === targetIndex || index === idIndex) return;
    const decl = spec.columns.get(name);
    if (decl !== 'ignore') loaded.push({ index, name, decl });
  });
  return { header: header.fields, headerLine: header.line, targetIndex, idIndex, loaded };
}

/**
 * What pass 1 learns about a loaded column. Declared columns start with both flags false, so the
 * inference loop passes over them.
 */
interface Inference {
  readonly column: LoadedColumn;
  numericOk: boolean;
  dateOk: boolean;
  /** First `NaN`/`Infinity`-like cell: an error if the column turns out numeric. */
  nonFiniteText: string | undefined;
  nonFiniteLine: number;
}

interface Pass1 {
  readonly layout: Layout;
  readonly nRows: number;
  readonly digest: string;
  /** Distinct trimmed target values with the line each first appears on (at most 11 kept). */
  readonly targetValues: ReadonlyMap<string, number>;
  readonly ids: string[] | undefined;
  /** One per `layout.loaded` column, same order. */
  readonly inferences: readonly Inference[];
}

function raggedRow(file: string, rec: CsvRecord, width: number): CsvError {
  return new CsvError({
    file,
    line: rec.line,
    column: 0,
    expected: `${width} fields (as in the header)`,
    found: `${rec.fields.length}`,
    hint: 'a field with a comma or a line break must be enclosed in double quotes',
  });
}

async function firstPass(path: string, spec: DataSpec, missing: MissingTokens, options: CsvReadOptions): Promise<Pass1> {
  const source = new CsvSource(path, options);
  let layout: Layout | undefined;
  let width = 0;
  let nRows = 0;
  const targetValues = new Map<string, number>();
  let ids: string[] | undefined;
  const idLines = new Map<string, number>();
  let inferences: Inference[] = [];
  for await (const batch of source.batches()) {
    for (const rec of batch) {
      if (layout === undefined) {
        layout = resolveLayout(path, rec, spec);
        width = rec.fields.length;
        if (layout.idIndex >= 0) ids = [];
        inferences = layout.loaded.map((column) => ({
          column,
          numericOk: column.decl === undefined,
          dateOk: column.decl === undefined,
          nonFiniteText: undefined,
          nonFiniteLine: 0,
        }));
        continue;
      }
      const f = rec.fields;
      if (f.length !== width) throw raggedRow(path, rec, width);
      const t = trimCell(f[layout.targetIndex]);
      if (missing.has(t)) {
        throw new CsvError({
          file: path,
          line: rec.line,
          column: layout.targetIndex + 1,
          columnName: spec.target,
          expected: 'a target value on every row',
          found: `a missing value ${quoteText(f[layout.targetIndex])}`,
          hint: 'drop rows without an outcome before modeling',
        });
      }
      if (targetValues.size <= MAX_LISTED_VALUES && !targetValues.has(t)) targetValues.set(t, rec.line);
      if (ids !== undefined) {
        const id = f[layout.idIndex];
        const earlier = idLines.get(id);
        if (earlier !== undefined || id.trim() === '') {
          throw new CsvError({
            file: path,
            line: rec.line,
            column: layout.idIndex + 1,
            columnName: spec.id,
            expected: 'a unique, non-empty id on every row',
            found: earlier === undefined ? 'an empty id' : `${quoteText(id)}, already used on line ${earlier}`,
            hint: 'ids identify rows in the output files; fix the data or leave data.id unset',
          });
        }
        const kept = detach(id);
        idLines.set(kept, rec.line);
        ids.push(kept);
      }
      for (let k = 0; k < inferences.length; k++) {
        const inf = inferences[k];
        if (!inf.numericOk && !inf.dateOk) continue;
        const cell = trimCell(f[inf.column.index]);
        if (missing.has(cell)) continue;
        if (inf.numericOk) {
          const x = parseDecimal(cell);
          if (x !== x) {
            if (isNonFiniteToken(cell)) {
              if (inf.nonFiniteText === undefined) {
                inf.nonFiniteText = cell;
                inf.nonFiniteLine = rec.line;
              }
            } else {
              inf.numericOk = false;
            }
          } else if (x === Infinity || x === -Infinity) {
            if (inf.nonFiniteText === undefined) {
              inf.nonFiniteText = cell;
              inf.nonFiniteLine = rec.line;
            }
          }
        }
        if (inf.dateOk && parseIsoDate(cell) !== parseIsoDate(cell)) inf.dateOk = false;
      }
      nRows++;
    }
  }
  if (layout === undefined) throw new Error('unreachable: CsvSource yields at least one record or throws');
  if (nRows === 0) {
    throw new CsvError({
      file: path,
      line: layout.headerLine + 1,
      column: 0,
      expected: 'data rows after the header',
      found: 'none',
      hint: 'the file has a header line only',
    });
  }
  return { layout, nRows, digest: source.digest(), targetValues, ids, inferences };
}

function listValues(values: ReadonlyMap<string, number>): string {
  const shown = [...values.keys()].slice(0, MAX_LISTED_VALUES).map(quoteText).join(', ');
  return values.size > MAX_LISTED_VALUES ? `${shown}, ... (more than ${MAX_LISTED_VALUES})` : shown;
}

/** Checks the target's values and returns the labels mapped to 1 and 0. */
function targetLabels(path: string, pass: Pass1, spec: DataSpec): { positive: string; negative: string } {
  const { targetValues, layout } = pass;
  const base = { file: path, line: layout.headerLine, column: layout.targetIndex + 1, columnName: spec.target };
  const found = `${targetValues.size > MAX_LISTED_VALUES ? 'more than 10' : targetValues.size} distinct value(s): ${listValues(targetValues)}`;
  if (targetValues.size === 1) {
    throw new CsvError({
      ...base,
      expected: 'two classes in the target',
      found: `only ${listValues(targetValues)}`,
      hint: 'a model needs rows of both outcomes; check the file or the target column name',
    });
  }
  if (spec.positive === undefined) {
    if (targetValues.size !== 2 || !targetValues.has('0') || !targetValues.has('1')) {
      throw new CsvError({ ...base, expected: 'the values 0 and 1', found, hint: TARGET_HINT });
    }
    return { positive: '1', negative: '0' };
  }
  if (targetValues.size !== 2) {
    throw new CsvError({
      ...base,
      expected: 'exactly two distinct target values',
      found,
      hint: `${TARGET_HINT}; a target with more than two labels must be recoded to two before loading`,
    });
  }
  if (!targetValues.has(spec.positive)) {
    throw new CsvError({
      ...base,
      expected: `the positive label ${quoteText(spec.positive)} among the target values`,
      found,
      hint: `${TARGET_HINT}: one of ${listValues(targetValues)}`,
    });
  }
  let negative = '';
  for (const v of targetValues.keys()) if (v !== spec.positive) negative = v;
  return { positive: spec.positive, negative };
}

function sharedFloat64(n: number): Float64Array {
  return new Float64Array(new SharedArrayBuffer(n * Float64Array.BYTES_PER_ELEMENT));
}

function sharedInt32(n: number): Int32Array {
  return new Int32Array(new SharedArrayBuffer(n * Int32Array.BYTES_PER_ELEMENT));
}

interface FloatFill {
  readonly column: LoadedColumn;
  readonly values: Float64Array;
}

interface CategoricalFill {
  readonly column: LoadedColumn;
  readonly codes: Int32Array;
  readonly levels: string[];
  readonly codeOf: Map<string, number>;
}

function typeOf(path: string, inf: Inference): ColumnType {
  const column = inf.column;
  switch (column.decl) {
    case 'numeric':
      return 'numeric';
    case 'date':
      return 'date';
    case 'categorical':
    case 'protected':
      return 'categorical';
    case undefined:
      if (inf.numericOk) {
        if (inf.nonFiniteText !== undefined) {
          throw new CsvError({
            file: path,
            line: inf.nonFiniteLine,
            column: column.index + 1,
            columnName: column.name,
            expected: 'a finite number (the other values of this column are numbers)',
            found: quoteText(inf.nonFiniteText),
            hint: BAD_CELL_HINT,
          });
        }
        return 'numeric';
      }
      return inf.dateOk ? 'date' : 'categorical';
  }
}

function badCell(path: string, rec: CsvRecord, column: LoadedColumn, expected: string): CsvError {
  return new CsvError({
    file: path,
    line: rec.line,
    column: column.index + 1,
    columnName: column.name,
    expected,
    found: quoteText(rec.fields[column.index]),
    hint: BAD_CELL_HINT,
  });
}

export async function loadFrame(path: string, spec: DataSpec, options: CsvReadOptions = {}): Promise<LoadedData> {
  const missing = new MissingTokens(spec.missing);
  const pass = await firstPass(path, spec, missing, options);
  const { layout, nRows } = pass;
  const labels = targetLabels(path, pass, spec);

  const types = new Map<string, ColumnType>();
  const numerics: FloatFill[] = [];
  const dates: FloatFill[] = [];
  const categoricals: CategoricalFill[] = [];
  for (const inf of pass.inferences) {
    const column = inf.column;
    const type = typeOf(path, inf);
    types.set(column.name, type);
    if (type === 'numeric') numerics.push({ column, values: sharedFloat64(nRows) });
    else if (type === 'date') dates.push({ column, values: sharedFloat64(nRows) });
    else categoricals.push({ column, codes: sharedInt32(nRows), levels: [], codeOf: new Map() });
  }

  const target = new Uint8Array(new SharedArrayBuffer(nRows));
  const positive = labels.positive;
  const source = new CsvSource(path, options);
  let row = -1;
  for await (const batch of source.batches()) {
    for (const rec of batch) {
      if (row === -1) {
        row = 0;
        continue;
      }
      const f = rec.fields;
      if (row >= nRows || f.length !== layout.header.length) throw changedDuringLoad(path);
      target[row] = trimCell(f[layout.targetIndex]) === positive ? 1 : 0;
      for (let k = 0; k < numerics.length; k++) {
        const fill = numerics[k];
        const cell = trimCell(f[fill.column.index]);
        if (missing.has(cell)) {
          fill.values[row] = NaN;
          continue;
        }
        const x = parseDecimal(cell);
        if (x - x !== 0) {
          throw badCell(path, rec, fill.column, isNonFiniteToken(cell) || x === x ? 'a finite number' : 'a number');
        }
        fill.values[row] = x;
      }
      for (let k = 0; k < dates.length; k++) {
        const fill = dates[k];
        const cell = trimCell(f[fill.column.index]);
        if (missing.has(cell)) {
          fill.values[row] = NaN;
          continue;
        }
        const days = parseIsoDate(cell);
        if (days !== days) throw badCell(path, rec, fill.column, 'an ISO 8601 date YYYY-MM-DD that exists');
        fill.values[row] = days;
      }
      for (let k = 0; k < categoricals.length; k++) {
        const fill = categoricals[k];
        const text = f[fill.column.index];
        if (missing.has(trimCell(text))) {
          fill.codes[row] = -1;
          continue;
        }
        let code = fill.codeOf.get(text);
        if (code === undefined) {
          code = fill.levels.length;
          const kept = detach(text);
          fill.levels.push(kept);
          fill.codeOf.set(kept, code);
        }
        fill.codes[row] = code;
      }
      row++;
    }
  }
  if (row !== nRows || source.digest() !== pass.digest) throw changedDuringLoad(path);

  const built = new Map<number, Column>();
  for (const fill of numerics) built.set(fill.column.index, numeric(fill.column.name, fill.values));
  for (const fill of dates) built.set(fill.column.index, dateColumn(fill.column.name, fill.values));
  for (const fill of categoricals) built.set(fill.column.index, categorical(fill.column.name, fill.codes, fill.levels));
  const columns = new Map<string, Column>();
  const roles = new Map<string, Role>();
  layout.header.forEach((name, index) => {
    const c = built.get(index);
    if (c !== undefined) {
      columns.set(name, c);
      roles.set(name, spec.columns.get(name) === 'protected' ? 'protected' : c.type === 'date' ? 'date' : 'feature');
    } else if (index === layout.targetIndex) roles.set(name, 'target');
    else if (index === layout.idIndex) roles.set(name, 'id');
    else roles.set(name, 'ignore');
  });
  const ids = pass.ids ?? Array.from({ length: nRows }, (_, i) => String(i + 1));
  const frame: Frame = { nRows, columns, roles, target, ids, targetLabels: labels };
  return { frame, digest: pass.digest, header: layout.header, inferred: types };
}

function changedDuringLoad(path: string): CsvError {
  return new CsvError({
    file: path,
    line: 0,
    column: 0,
    expected: 'the same file content in both reading passes',
    found: 'a file that changed while it was being loaded',
    hint: 'wait until whatever writes the file has finished, then run again',
  });
}
