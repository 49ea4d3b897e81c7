/**
 * Loads a CSV file into the columnar `Frame` in one or two streaming passes.
 *
 * Pass 1 checks the shape (field counts, target values, ids), infers the type of every undeclared
 * column, and parses numbers and dates straight into growable typed arrays for every column that
 * can still be numeric or a date (an array is dropped as soon as its column cannot be). Categorical
 * levels must be numbered in order of first appearance, and a column is known to be categorical
 * only at the end of pass 1, so a second pass fills the categorical codes; a file without
 * categorical columns is read once. Both passes hash the bytes, and a mismatch means the file
 * changed in between.
 *
 * Cells are handled as ranges of the parser's text: numbers are parsed in place, and strings are
 * made only for ids, target values, levels and date candidates.
 *
 * Rules: a cell is missing when, with surrounding whitespace (ASCII space and control characters)
 * trimmed, it is empty or equal to one
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
import { editDistance } from '../../stages/core/edit-distance.js';
import { checkHeader, scanCsv, type CsvReadOptions, type CsvRecord, type CsvRow, type CsvSink } from './csv-reader.js';
import { CsvError, quoteText } from './csv-error.js';
import { isNonFiniteToken, parseDecimalRange, parseIsoDate } from './cells.js';

import type { ColumnDecl } from '../config/types.js';

export type { ColumnDecl };

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

const SPACE = 32;

/** Trims ASCII space and control characters, the same rule as the range trimming below. */
function trimAscii(s: string): string {
  let a = 0;
  let b = s.length;
  while (a < b && s.charCodeAt(a) <= SPACE) a++;
  while (b > a && s.charCodeAt(b - 1) <= SPACE) b--;
  return s.slice(a, b);
}

/** Decides missingness of a trimmed range; no slice for texts longer than every token. */
class MissingTokens {
  private readonly tokens: ReadonlySet<string>;
  private readonly maxLength: number;

  constructor(tokens: readonly string[]) {
    const trimmed = tokens.map(trimAscii);
    this.tokens = new Set(trimmed);
    this.maxLength = trimmed.reduce((m, t) => Math.max(m, t.length), 0);
  }

  has(text: string, start: number, end: number): boolean {
    return start === end || (end - start <= this.maxLength && this.tokens.has(text.slice(start, end)));
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

/** Separators other tools write; a one-column header containing one of them means the file is not comma-separated. */
const OTHER_SEPARATORS = [';', '\t', '|'];

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
  const separator = header.fields.length === 1 ? OTHER_SEPARATORS.find((c) => header.fields[0].includes(c)) : undefined;
  if (separator !== undefined) {
    return new CsvError({
      file,
      line: header.line,
      column: 0,
      expected: `a column named ${quoteText(name)} (${what})`,
      found: `a header of one column, ${quoteText(header.fields[0])}`,
      hint: `the file looks ${separator === '\t' ? 'tab' : quoteText(separator)}-separated; foldstack reads comma-separated files, so re-save it with commas`,
    });
  }
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

/** What a pass does with field `k` of a data row. */
const SKIP = 0;
const TARGET = 1;
const ID = 2;
/** A numeric and/or date candidate (undeclared, or declared numeric or date). */
const VALUE = 3;

/** Per loaded column: what pass 1 learned and the values it kept. */
interface ColumnState {
  readonly column: LoadedColumn;
  /** Parsed numbers by row (NaN = missing) while the column can be numeric; undefined once it cannot. */
  numbers: Float64Array | undefined;
  /** Epoch days by row while the column can be a date. */
  days: Float64Array | undefined;
  /** First `NaN`/`Infinity`-like cell: an error if the column turns out numeric. */
  nonFiniteText: string | undefined;
  nonFiniteLine: number;
}

const MIN_CAPACITY = 1024;

function grownFloat64(a: Float64Array, capacity: number): Float64Array {
  const out = new Float64Array(capacity);
  out.set(a);
  return out;
}

function raggedRow(file: string, line: number, count: number, width: number): CsvError {
  return new CsvError({
    file,
    line,
    column: 0,
    expected: `${width} fields (as in the header)`,
    found: `${count}`,
    hint: 'a field with a comma or a line break must be enclosed in double quotes',
  });
}

function badCell(file: string, text: string, line: number, index: number, name: string, expected: string): CsvError {
  return new CsvError({ file, line, column: index + 1, columnName: name, expected, found: quoteText(text), hint: BAD_CELL_HINT });
}

function trimmedStart(text: string, start: number, end: number): number {
  while (start < end && text.charCodeAt(start) <= SPACE) start++;
  return start;
}

function trimmedEnd(text: string, start: number, end: number): number {
  while (end > start && text.charCodeAt(end - 1) <= SPACE) end--;
  return end;
}

/** Pass 1: header and layout, field counts, target, ids, type inference, numbers and dates. */
class FirstPass implements CsvSink {
  layout: Layout | undefined;
  nRows = 0;
  /** 1 where the trimmed target equals the positive label (`spec.positive`, else `1`). */
  target = new Uint8Array(0);
  /** Distinct trimmed target values with the line each first appears on (at most 11 kept). */
  readonly targetValues = new Map<string, number>();
  ids: string[] | undefined;
  /** One per `layout.loaded` column, same order. */
  states: ColumnState[] = [];
  private capacity = 0;
  private role = new Uint8Array(0);
  /** Field index → position in `states`. */
  private slot = new Int32Array(0);
  private readonly idLines = new Map<string, number>();
  private readonly positive: string;

  constructor(
    private readonly file: string,
    private readonly spec: DataSpec,
    private readonly missing: MissingTokens,
  ) {
    this.positive = spec.positive ?? '1';
  }

  record(row: CsvRow): void {
    if (this.layout === undefined) {
      const fields = Array.from({ length: row.count }, (_, k) => row.texts[k].slice(row.starts[k], row.ends[k]));
      const header = { fields, line: row.line };
      checkHeader(this.file, header);
      this.start(resolveLayout(this.file, header, this.spec));
      return;
    }
    const width = this.layout.header.length;
    if (row.count !== width) throw raggedRow(this.file, row.line, row.count, width);
    if (this.nRows === this.capacity) this.grow();
    const { texts, starts, ends, line } = row;
    const role = this.role;
    for (let k = 0; k < width; k++) {
      switch (role[k]) {
        case TARGET:
          this.targetCell(texts[k], starts[k], ends[k], k, line);
          break;
        case ID:
          this.idCell(texts[k].slice(starts[k], ends[k]), k, line);
          break;
        case VALUE:
          this.valueCell(texts[k], starts[k], ends[k], k, line);
          break;
      }
    }
    this.nRows++;
  }

  private start(layout: Layout): void {
    this.layout = layout;
    const width = layout.header.length;
    this.role = new Uint8Array(width);
    this.slot = new Int32Array(width);
    this.role[layout.targetIndex] = TARGET;
    if (layout.idIndex >= 0) {
      this.role[layout.idIndex] = ID;
      this.ids = [];
    }
    this.states = layout.loaded.map((column, k) => {
      const decl = column.decl;
      const numbers = decl === undefined || decl === 'numeric' ? new Float64Array(0) : undefined;
      const days = decl === undefined || decl === 'date' ? new Float64Array(0) : undefined;
      if (numbers !== undefined || days !== undefined) this.role[column.index] = VALUE;
      this.slot[column.index] = k;
      return { column, numbers, days, nonFiniteText: undefined, nonFiniteLine: 0 };
    });
  }

  private grow(): void {
    const capacity = Math.max(MIN_CAPACITY, this.capacity * 2);
    const target = new Uint8Array(capacity);
    target.set(this.target);
    this.target = target;
    for (const st of this.states) {
      if (st.numbers !== undefined) st.numbers = grownFloat64(st.numbers, capacity);
      if (st.days !== undefined) st.days = grownFloat64(st.days, capacity);
    }
    this.capacity = capacity;
  }

  private targetCell(text: string, start: number, end: number, index: number, line: number): void {
    const a = trimmedStart(text, start, end);
    const b = trimmedEnd(text, a, end);
    if (this.missing.has(text, a, b)) {
      throw new CsvError({
        file: this.file,
        line,
        column: index + 1,
        columnName: this.spec.target,
        expected: 'a target value on every row',
        found: `a missing value ${quoteText(text.slice(start, end))}`,
        hint: 'drop rows without an outcome before modeling',
      });
    }
    this.target[this.nRows] = b - a === this.positive.length && text.startsWith(this.positive, a) ? 1 : 0;
    if (this.targetValues.size <= MAX_LISTED_VALUES) {
      const value = text.slice(a, b);
      if (!this.targetValues.has(value)) this.targetValues.set(value, line);
    }
  }

  private idCell(id: string, index: number, line: number): void {
    const earlier = this.idLines.get(id);
    if (earlier !== undefined || trimAscii(id) === '') {
      throw new CsvError({
        file: this.file,
        line,
        column: index + 1,
        columnName: this.spec.id,
        expected: 'a unique, non-empty id on every row',
        found: earlier === undefined ? 'an empty id' : `${quoteText(id)}, already used on line ${earlier}`,
        hint: 'ids identify rows in the output files; fix the data or leave data.id unset',
      });
    }
    const kept = detach(id);
    this.idLines.set(kept, line);
    this.ids?.push(kept);
  }

  private valueCell(text: string, start: number, end: number, index: number, line: number): void {
    const st = this.states[this.slot[index]];
    const r = this.nRows;
    const a = trimmedStart(text, start, end);
    const b = trimmedEnd(text, a, end);
    if (this.missing.has(text, a, b)) {
      if (st.numbers !== undefined) st.numbers[r] = NaN;
      if (st.days !== undefined) st.days[r] = NaN;
      return;
    }
    if (st.numbers !== undefined) {
      const x = parseDecimalRange(text, a, b);
      if (x - x === 0) {
        st.numbers[r] = x;
      } else {
        const cell = text.slice(a, b);
        const nonFinite = x === x || isNonFiniteToken(cell);
        if (st.column.decl === 'numeric') {
          throw badCell(this.file, text.slice(start, end), line, index, st.column.name, nonFinite ? 'a finite number' : 'a number');
        }
        if (nonFinite) {
          st.numbers[r] = NaN;
          if (st.nonFiniteText === undefined) {
            st.nonFiniteText = cell;
            st.nonFiniteLine = line;
          }
        } else {
          st.numbers = undefined;
        }
      }
    }
    if (st.days !== undefined) {
      const d = parseIsoDate(text.slice(a, b));
      if (d === d) {
        st.days[r] = d;
      } else if (st.column.decl === 'date') {
        throw badCell(this.file, text.slice(start, end), line, index, st.column.name, 'an ISO 8601 date YYYY-MM-DD that exists');
      } else {
        st.days = undefined;
      }
    }
    if (st.numbers === undefined && st.days === undefined) this.role[index] = SKIP;
  }
}

function listValues(values: ReadonlyMap<string, number>): string {
  const shown = [...values.keys()].slice(0, MAX_LISTED_VALUES).map(quoteText).join(', ');
  return values.size > MAX_LISTED_VALUES ? `${shown}, ... (more than ${MAX_LISTED_VALUES})` : shown;
}

/** Checks the target's values and returns the labels mapped to 1 and 0. */
function targetLabels(
  path: string,
  layout: Layout,
  targetValues: ReadonlyMap<string, number>,
  spec: DataSpec,
): { positive: string; negative: string } {
  const base = { file: path, line: layout.headerLine, column: layout.targetIndex + 1, columnName: spec.target };
  const count = targetValues.size > MAX_LISTED_VALUES ? `more than ${MAX_LISTED_VALUES}` : `${targetValues.size}`;
  const found = `${count} distinct value(s): ${listValues(targetValues)}`;
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

/** The column's final type; numeric wins when nothing rules it out (an all-missing column). */
function typeOf(path: string, st: ColumnState): ColumnType {
  const column = st.column;
  if (column.decl === 'categorical' || column.decl === 'protected') return 'categorical';
  if (st.numbers !== undefined) {
    if (st.nonFiniteText !== undefined) {
      throw new CsvError({
        file: path,
        line: st.nonFiniteLine,
        column: column.index + 1,
        columnName: column.name,
        expected: 'a finite number (the other values of this column are numbers)',
        found: quoteText(st.nonFiniteText),
        hint: BAD_CELL_HINT,
      });
    }
    return 'numeric';
  }
  return st.days !== undefined ? 'date' : 'categorical';
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

interface CategoricalFill {
  readonly codes: Int32Array;
  readonly levels: string[];
  readonly codeOf: Map<string, number>;
}

/** Pass 2: codes of the categorical columns, levels numbered in order of first appearance. */
class CategoricalPass implements CsvSink {
  /** By field index; undefined for other columns. */
  readonly fills: (CategoricalFill | undefined)[];
  private row = -1;
  private readonly width: number;

  constructor(
    private readonly file: string,
    layout: Layout,
    categoricalIndexes: readonly number[],
    private readonly nRows: number,
    private readonly missing: MissingTokens,
  ) {
    this.width = layout.header.length;
    this.fills = new Array<CategoricalFill | undefined>(this.width);
    for (const index of categoricalIndexes) {
      const codes = new Int32Array(new SharedArrayBuffer(nRows * Int32Array.BYTES_PER_ELEMENT));
      this.fills[index] = { codes, levels: [], codeOf: new Map() };
    }
  }

  /** Data rows seen. */
  get rows(): number {
    return this.row;
  }

  record(row: CsvRow): void {
    if (this.row < 0) {
      this.row = 0;
      return;
    }
    if (row.count !== this.width || this.row >= this.nRows) throw changedDuringLoad(this.file);
    const { texts, starts, ends } = row;
    const r = this.row;
    for (let k = 0; k < this.width; k++) {
      const fill = this.fills[k];
      if (fill === undefined) continue;
      const text = texts[k];
      const a = trimmedStart(text, starts[k], ends[k]);
      if (this.missing.has(text, a, trimmedEnd(text, a, ends[k]))) {
        fill.codes[r] = -1;
        continue;
      }
      const level = text.slice(starts[k], ends[k]);
      let code = fill.codeOf.get(level);
      if (code === undefined) {
        code = fill.levels.length;
        const kept = detach(level);
        fill.levels.push(kept);
        fill.codeOf.set(kept, code);
      }
      fill.codes[r] = code;
    }
    this.row++;
  }
}

function sharedCopy(values: Float64Array, n: number): Float64Array {
  const out = new Float64Array(new SharedArrayBuffer(n * Float64Array.BYTES_PER_ELEMENT));
  out.set(values.subarray(0, n));
  return out;
}

export async function loadFrame(path: string, spec: DataSpec, options: CsvReadOptions = {}): Promise<LoadedData> {
  const missing = new MissingTokens(spec.missing);
  const first = new FirstPass(path, spec, missing);
  const digest = await scanCsv(path, first, options);
  const layout = first.layout;
  if (layout === undefined) throw changedDuringLoad(path);
  const nRows = first.nRows;
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
  const labels = targetLabels(path, layout, first.targetValues, spec);
  const types = first.states.map((st) => typeOf(path, st));

  const categoricalIndexes = first.states.filter((_, k) => types[k] === 'categorical').map((st) => st.column.index);
  const second = new CategoricalPass(path, layout, categoricalIndexes, nRows, missing);
  if (categoricalIndexes.length > 0) {
    const secondDigest = await scanCsv(path, second, options);
    if (second.rows !== nRows || secondDigest !== digest) throw changedDuringLoad(path);
  }

  const byIndex = new Map<number, Column>();
  const inferred = new Map<string, ColumnType>();
  first.states.forEach((st, k) => {
    const { index, name } = st.column;
    const type = types[k];
    inferred.set(name, type);
    const fill = second.fills[index];
    if (type === 'numeric' && st.numbers !== undefined) byIndex.set(index, numeric(name, sharedCopy(st.numbers, nRows)));
    else if (type === 'date' && st.days !== undefined) byIndex.set(index, dateColumn(name, sharedCopy(st.days, nRows)));
    else if (fill !== undefined) byIndex.set(index, categorical(name, fill.codes, fill.levels));
  });
  const columns = new Map<string, Column>();
  const roles = new Map<string, Role>();
  layout.header.forEach((name, index) => {
    const c = byIndex.get(index);
    if (c !== undefined) {
      columns.set(name, c);
      roles.set(name, spec.columns.get(name) === 'protected' ? 'protected' : c.type === 'date' ? 'date' : 'feature');
    } else if (index === layout.targetIndex) roles.set(name, 'target');
    else if (index === layout.idIndex) roles.set(name, 'id');
    else roles.set(name, 'ignore');
  });
  const target = new Uint8Array(new SharedArrayBuffer(nRows));
  target.set(first.target.subarray(0, nRows));
  const ids = first.ids ?? Array.from({ length: nRows }, (_, i) => String(i + 1));
  const frame: Frame = { nRows, columns, roles, target, ids, targetLabels: labels };
  return { frame, digest, header: layout.header, inferred };
}
