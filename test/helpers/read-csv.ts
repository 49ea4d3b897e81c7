/**
 * A small RFC 4180 reader for the reference CSV files, so the tests that use them do not depend on
 * the project's own loader (which is itself under test elsewhere). Empty field = missing.
 */
import { readFileSync } from 'node:fs';
import { categorical, numeric, type CategoricalColumn, type NumericColumn } from '../../pipeline/frame.js';

export interface CsvTable {
  readonly header: readonly string[];
  /** Raw field text per column, in header order. */
  readonly fields: readonly (readonly string[])[];
  readonly nRows: number;
}

export function readCsv(path: string): CsvTable {
  const text = readFileSync(path, 'utf8');
  const records: string[][] = [];
  let record: string[] = [];
  let field = '';
  let quoted = false;
  for (let i = 0; i < text.length; i++) {
    const ch = text[i];
    if (quoted) {
      if (ch === '"') {
        if (text[i + 1] === '"') {
          field += '"';
          i++;
        } else quoted = false;
      } else field += ch;
    } else if (ch === '"') quoted = true;
    else if (ch === ',') {
      record.push(field);
      field = '';
    } else if (ch === '\n' || ch === '\r') {
      if (ch === '\r' && text[i + 1] === '\n') i++;
      record.push(field);
      records.push(record);
      record = [];
      field = '';
    } else field += ch;
  }
  if (field !== '' || record.length > 0) {
    record.push(field);
    records.push(record);
  }
  const header = records[0];
  const body = records.slice(1);
  const fields = header.map((_, j) => body.map((r) => r[j]));
  return { header, fields, nRows: body.length };
}

function fieldsOf(table: CsvTable, name: string): readonly string[] {
  const j = table.header.indexOf(name);
  if (j < 0) throw new Error(`column ${name} not in CSV header`);
  return table.fields[j];
}

export function numericColumnOf(table: CsvTable, name: string): NumericColumn {
  const raw = fieldsOf(table, name);
  return numeric(name, Float64Array.from(raw, (s) => (s === '' ? NaN : Number(s))));
}

/** Levels in order of first appearance, so codes differ from any sorted order on purpose. */
export function categoricalColumnOf(table: CsvTable, name: string): CategoricalColumn {
  const raw = fieldsOf(table, name);
  const levels: string[] = [];
  const index = new Map<string, number>();
  const codes = new Int32Array(raw.length);
  raw.forEach((s, i) => {
    if (s === '') {
      codes[i] = -1;
      return;
    }
    let c = index.get(s);
    if (c === undefined) {
      c = levels.length;
      levels.push(s);
      index.set(s, c);
    }
    codes[i] = c;
  });
  return categorical(name, codes, levels);
}

/** 0/1 target: 1 where the column's text equals `positive`. */
export function targetOf(table: CsvTable, name: string, positive: string): Uint8Array {
  return Uint8Array.from(fieldsOf(table, name), (s) => (s === positive ? 1 : 0));
}
