import { createHash } from 'node:crypto';
import { existsSync, mkdtempSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { CsvError, CsvSource, readCsv, type CsvReadOptions, type CsvRecord } from '../pipeline/io/csv-reader.js';
import { loadFrame, type ColumnDecl, type DataSpec } from '../pipeline/io/load.js';
import { formatNumber, neutralizeFormula, quoteField, writeCsvAtomic } from '../pipeline/io/csv-writer.js';
import { parseDecimal } from '../pipeline/io/cells.js';
import type { CategoricalColumn, Column, DateColumn, NumericColumn } from '../pipeline/frame.js';

const FIXTURES = join(import.meta.dirname, 'fixtures', 'csv');
const REFERENCE = join(import.meta.dirname, 'reference');
const fixture = (name: string): string => join(FIXTURES, name);
const scratch = mkdtempSync(join(tmpdir(), 'foldstack-csv-'));
afterAll(() => rmSync(scratch, { recursive: true, force: true }));

async function collect(path: string, options: CsvReadOptions = {}): Promise<CsvRecord[]> {
  const out: CsvRecord[] = [];
  for await (const r of readCsv(path, options)) out.push(r);
  return out;
}

async function csvError(run: () => Promise<unknown>): Promise<CsvError> {
  try {
    await run();
  } catch (err) {
    if (err instanceof CsvError) return err;
    throw err;
  }
  throw new Error('expected a CsvError, but the call succeeded');
}

function spec(target: string, extra: Partial<Omit<DataSpec, 'columns'>> & { columns?: [string, ColumnDecl][] } = {}): DataSpec {
  return {
    target,
    positive: extra.positive,
    id: extra.id,
    columns: new Map(extra.columns ?? []),
    missing: extra.missing ?? [],
  };
}

function num(c: Column | undefined): NumericColumn {
  if (c?.type !== 'numeric') throw new Error(`expected a numeric column, got ${c?.type}`);
  return c;
}
function cat(c: Column | undefined): CategoricalColumn {
  if (c?.type !== 'categorical') throw new Error(`expected a categorical column, got ${c?.type}`);
  return c;
}
function date(c: Column | undefined): DateColumn {
  if (c?.type !== 'date') throw new Error(`expected a date column, got ${c?.type}`);
  return c;
}
const decode = (c: CategoricalColumn): (string | null)[] => Array.from(c.codes, (k) => (k < 0 ? null : c.levels[k]));

describe('readCsv: RFC 4180 parsing', () => {
  it('reads quoted commas, doubled quotes and embedded LF/CRLF, and reports the line each record starts on', async () => {
    const recs = await collect(fixture('quoted.csv'));
    expect(recs.map((r) => r.fields)).toEqual([
      ['id', 'note', 'y'],
      ['1', 'plain, with comma', '0'],
      ['2', 'two\nlines', '1'],
      ['3', 'crlf\r\ninside "quoted"', '0'],
      ['4', 'three\n\nlines', '1'],
      ['5', 'last', '0'],
    ]);
    expect(recs.map((r) => r.line)).toEqual([1, 2, 3, 5, 7, 10]);
  });

  it('gives the same records and lines however the file is cut into chunks', async () => {
    const whole = await collect(fixture('quoted.csv'));
    for (const highWaterMark of [1, 2, 3, 5, 7, 16]) {
      expect(await collect(fixture('quoted.csv'), { highWaterMark })).toEqual(whole);
    }
    const crlf = await collect(fixture('crlf.csv'));
    for (const highWaterMark of [1, 2, 3]) expect(await collect(fixture('crlf.csv'), { highWaterMark })).toEqual(crlf);
  });

  it('drops a UTF-8 byte-order mark, also when it arrives one byte per chunk', async () => {
    for (const highWaterMark of [1, 1 << 16]) {
      const recs = await collect(fixture('bom.csv'), { highWaterMark });
      expect(recs[0].fields).toEqual(['y', 'amount']);
      expect(recs[0].fields[0].length).toBe(1);
    }
  });

  it('reads CRLF line endings, with a CRLF inside a quoted field kept as text', async () => {
    const recs = await collect(fixture('crlf.csv'));
    expect(recs.map((r) => r.fields)).toEqual([
      ['y', 'amount', 'kind'],
      ['0', '1', 'a'],
      ['1', '2', 'b'],
      ['0', '3', 'c\r\nd'],
    ]);
    expect(recs.map((r) => r.line)).toEqual([1, 2, 3, 4]);
  });

  it('reads old Mac line endings (lone CR) and mixed endings, also split across chunks', async () => {
    const path = join(scratch, 'cr.csv');
    writeFileSync(path, 'y,a\r0,"x\ry"\r1,2\n0,3\r\n1,4');
    for (const highWaterMark of [1, 2, 1 << 16]) {
      const recs = await collect(path, { highWaterMark });
      expect(recs.map((r) => r.fields)).toEqual([['y', 'a'], ['0', 'x\ry'], ['1', '2'], ['0', '3'], ['1', '4']]);
      expect(recs.map((r) => r.line)).toEqual([1, 2, 4, 5, 6]);
    }
  });

  it('keeps a trailing empty field, and reads a last record without a final line break', async () => {
    const recs = await collect(fixture('trailing-comma.csv'));
    expect(recs.map((r) => r.fields)).toEqual([
      ['y', 'a', 'b'],
      ['0', '1', ''],
      ['1', '2', '3'],
    ]);
  });

  it('rejects a quote inside an unquoted field and text after a closing quote, naming line and field', async () => {
    const stray = await csvError(() => collect(fixture('stray-quote.csv')));
    expect([stray.line, stray.column]).toEqual([2, 2]);
    expect(stray.hint).toMatch(/double every quote/);
    const after = await csvError(() => collect(fixture('after-quote.csv')));
    expect([after.line, after.column]).toEqual([2, 2]);
    expect(after.expected).toMatch(/after a closing quote/);
  });

  it('names the line where an unterminated quoted field opened', async () => {
    const err = await csvError(() => collect(fixture('unterminated.csv')));
    expect(err.line).toBe(3);
    expect(err.column).toBe(2);
    expect(err.message).toMatch(/opened on line 3/);
    expect(err.found).toBe('the end of the file');
  });

  it('refuses empty files, blank-only files, binary and non-UTF-8 input', async () => {
    expect((await csvError(() => collect(fixture('empty.csv')))).found).toMatch(/empty file/);
    expect((await csvError(() => collect(fixture('blank-lines.csv')))).found).toMatch(/no records/);
    expect((await csvError(() => collect(fixture('binary.bin')))).found).toMatch(/looks binary/);
    expect((await csvError(() => collect(fixture('utf16.csv')))).found).toMatch(/looks binary/);
    expect((await csvError(() => collect(fixture('latin1.csv')))).expected).toBe('UTF-8 text');
    expect((await csvError(() => collect(fixture('no-such-file.csv')))).found).toMatch(/^ENOENT/);
  });

  it('checks header names: no duplicates, no empty names', async () => {
    const dup = await csvError(() => collect(fixture('dup-header.csv')));
    expect([dup.line, dup.column]).toEqual([1, 4]);
    expect(dup.found).toMatch(/"a" again \(first as field 2\)/);
    const empty = await csvError(() => collect(fixture('empty-header.csv')));
    expect([empty.line, empty.column]).toEqual([1, 2]);
    expect(await collect(fixture('dup-header.csv'), { header: false })).toHaveLength(2);
  });

  it('computes the sha256 of the raw bytes while streaming', async () => {
    for (const name of ['quoted.csv', 'bom.csv', 'crlf.csv']) {
      const source = new CsvSource(fixture(name), { highWaterMark: 4 });
      expect(() => source.digest()).toThrow(CsvError);
      for await (const record of source.records()) expect(record.fields.length).toBeGreaterThan(0);
      expect(source.digest()).toBe(createHash('sha256').update(readFileSync(fixture(name))).digest('hex'));
    }
  });

  it('stops a field larger than 16 MiB with a clear error', async () => {
    const path = join(scratch, 'huge-field.csv');
    writeFileSync(path, `y,blob\n0,"${'x'.repeat(16 * 1024 * 1024 + 1)}"\n`);
    const err = await csvError(() => collect(path));
    expect(err.line).toBe(2);
    expect(err.column).toBe(2);
    expect(err.expected).toMatch(/at most 16777216 characters/);
  });
});

describe('readCsv: a large generated file', () => {
  it('reads 200k rows, including quoted fields with line breaks that straddle chunk boundaries', async () => {
    const path = join(scratch, 'big.csv');
    const rows = 200_000;
    const parts: string[] = ['id,x,note,y\n'];
    for (let i = 0; i < rows; i++) {
      // Every 7th row holds a quoted two-line field, so record start lines drift from row numbers.
      const note = i % 7 === 0 ? `"a,""b""\nc${i}"` : `n${i}`;
      parts.push(`${i},${(i * 0.25).toString()},${note},${i % 2}\n`);
    }
    const text = parts.join('');
    writeFileSync(path, text);
    for (const highWaterMark of [4099, 1 << 20]) {
      const source = new CsvSource(path, { highWaterMark });
      let count = 0;
      let line = 2;
      let bad = 0;
      let first = true;
      for await (const r of source.records()) {
        if (first) {
          first = false;
          continue;
        }
        const i = count++;
        const note = i % 7 === 0 ? `a,"b"\nc${i}` : `n${i}`;
        if (r.fields[0] !== String(i) || Number(r.fields[1]) !== i * 0.25 || r.fields[2] !== note || r.line !== line) bad++;
        line += i % 7 === 0 ? 2 : 1;
      }
      expect(count).toBe(rows);
      expect(bad).toBe(0);
      expect(source.digest()).toBe(createHash('sha256').update(text).digest('hex'));
    }
  });
});

describe('loadFrame: a large generated file', () => {
  it('loads 60k mixed rows identically at any chunk size, values checked cell by cell', async () => {
    const path = join(scratch, 'mixed.csv');
    const n = 60_000;
    const lines = ['id,y,x,kind,day'];
    for (let i = 0; i < n; i++) {
      const x = i % 11 === 0 ? 'NA' : String(i * 0.5 - 7);
      // Every 17th level is quoted and spans two lines, so records drift from physical lines.
      const kind = i % 13 === 0 ? '' : i % 17 === 0 ? `"k,\n${i % 2}"` : `c${i % 5}`;
      const day = new Date((i % 20_000) * 86_400_000).toISOString().slice(0, 10);
      lines.push(`r${i},${i % 3 === 0 ? 'bad' : 'good'},${x},${kind},${day}`);
    }
    writeFileSync(path, lines.join('\n') + '\n');
    const dataSpec = spec('y', { positive: 'bad', id: 'id', missing: ['NA'] });
    for (const highWaterMark of [4099, 1 << 20]) {
      const { frame, inferred } = await loadFrame(path, dataSpec, { highWaterMark });
      expect(Object.fromEntries(inferred)).toEqual({ x: 'numeric', kind: 'categorical', day: 'date' });
      const x = num(frame.columns.get('x')).values;
      const kind = cat(frame.columns.get('kind'));
      const days = date(frame.columns.get('day')).days;
      let bad = 0;
      for (let i = 0; i < n; i++) {
        const wantX = i % 11 === 0 ? NaN : i * 0.5 - 7;
        const wantKind = i % 13 === 0 ? null : i % 17 === 0 ? `k,\n${i % 2}` : `c${i % 5}`;
        const gotKind = kind.codes[i] < 0 ? null : kind.levels[kind.codes[i]];
        if (!Object.is(x[i], wantX) || gotKind !== wantKind || days[i] !== i % 20_000) bad++;
        if (frame.target[i] !== (i % 3 === 0 ? 1 : 0) || frame.ids[i] !== `r${i}`) bad++;
      }
      expect(bad).toBe(0);
      expect(kind.levels.slice(0, 4)).toEqual(['c1', 'c2', 'c3', 'c4']);
      expect(x.buffer).toBeInstanceOf(SharedArrayBuffer);
    }
  });
});

describe('loadFrame', () => {
  it('maps a labelled target with data.positive, trimming the target cell', async () => {
    const { frame } = await loadFrame(fixture('labels.csv'), spec('status', { positive: 'bad' }));
    expect(Array.from(frame.target)).toEqual([0, 1, 0, 1]);
    expect(frame.targetLabels).toEqual({ positive: 'bad', negative: 'good' });
    expect(frame.ids).toEqual(['1', '2', '3', '4']);
    expect(Array.from(num(frame.columns.get('x')).values)).toEqual([1, 2, 3, 4]);
  });

  it('accepts a 0/1 target without data.positive and refuses other values with the hint', async () => {
    const { frame } = await loadFrame(fixture('zero-one.csv'), spec('y'));
    expect(Array.from(frame.target)).toEqual([0, 1, 0, 1]);
    expect(frame.targetLabels).toEqual({ positive: '1', negative: '0' });
    const err = await csvError(() => loadFrame(fixture('not-zero-one.csv'), spec('y')));
    expect(err.found).toMatch(/"1", "2"/);
    expect(err.hint).toMatch(/set data.positive to the label that means the event/);
  });

  it('refuses a target with three values, naming them', async () => {
    const err = await csvError(() => loadFrame(fixture('target-three.csv'), spec('outcome', { positive: 'high' })));
    expect(err.found).toBe('3 distinct value(s): "low", "mid", "high"');
    expect(err.columnName).toBe('outcome');
    expect((await csvError(() => loadFrame(fixture('target-three.csv'), spec('outcome')))).found).toMatch(/"low", "mid", "high"/);
  });

  it('refuses a single-class target, and a positive label that never occurs', async () => {
    const err = await csvError(() => loadFrame(fixture('single-class.csv'), spec('y')));
    expect(err.expected).toBe('two classes in the target');
    expect(err.found).toBe('only "1"');
    const absent = await csvError(() => loadFrame(fixture('labels.csv'), spec('status', { positive: 'BAD' })));
    expect(absent.hint).toMatch(/one of "good", "bad"/);
  });

  it('refuses a row with a missing target, naming its line', async () => {
    const err = await csvError(() => loadFrame(fixture('zero-one.csv'), spec('y', { missing: ['1'] })));
    expect(err.line).toBe(3);
    expect(err.expected).toBe('a target value on every row');
  });

  it('names the line of a row with the wrong number of fields', async () => {
    const err = await csvError(() => loadFrame(fixture('ragged.csv'), spec('y')));
    expect(err.line).toBe(3);
    expect(err.message).toMatch(/expected 3 fields \(as in the header\), found 2/);
  });

  it('loads columns named __proto__, constructor and hasOwnProperty like any other', async () => {
    const { frame, inferred } = await loadFrame(fixture('proto.csv'), spec('y'));
    expect([...frame.columns.keys()]).toEqual(['__proto__', 'constructor', 'hasOwnProperty']);
    const proto = num(frame.columns.get('__proto__')).values;
    expect(proto[0]).toBe(1.5);
    expect(proto[1]).toBe(2.5);
    expect(proto[2]).toBeNaN();
    expect(decode(cat(frame.columns.get('constructor')))).toEqual(['a', 'b', 'a']);
    expect(decode(cat(frame.columns.get('hasOwnProperty')))).toEqual(['x', 'y', 'x']);
    expect(inferred.get('__proto__')).toBe('numeric');
    expect(frame.roles.get('constructor')).toBe('feature');
  });

  it('treats configured missing tokens (trimmed) and blank cells as missing', async () => {
    const { frame, inferred } = await loadFrame(fixture('missing.csv'), spec('y', { missing: ['NA', '?'] }));
    expect(inferred.get('num')).toBe('numeric');
    const v = num(frame.columns.get('num')).values;
    expect([v[0], v[4]]).toEqual([1, 4]);
    expect([v[1], v[2], v[3]].every(Number.isNaN)).toBe(true);
    const c = cat(frame.columns.get('cat'));
    // Levels keep the cell text as written: " a" is not "a".
    expect(decode(c)).toEqual(['a', 'b', null, null, ' a']);
    expect(c.levels).toEqual(['a', 'b', ' a']);
    const without = await loadFrame(fixture('missing.csv'), spec('y'));
    expect(without.inferred.get('num')).toBe('categorical');
  });

  it('infers numeric, categorical and date columns; a date that does not exist makes the column categorical', async () => {
    const { frame, inferred } = await loadFrame(fixture('types.csv'), spec('y'));
    expect(Object.fromEntries(inferred)).toEqual({
      num: 'numeric',
      cat: 'categorical',
      when: 'date',
      stamp: 'date',
      baddate: 'categorical',
      mixed: 'categorical',
    });
    expect(Array.from(num(frame.columns.get('num')).values)).toEqual([12, -3.5, 0.001, 0.5]);
    // Epoch days: 2024-02-29 = 19782, 1970-01-01 = 0, 1969-12-31 = -1, 2000-03-01 = 11017
    // (from memory; the weekday test below checks the day count against pandas).
    expect(Array.from(date(frame.columns.get('when')).days)).toEqual([19782, 0, -1, 11017]);
    expect(Array.from(date(frame.columns.get('stamp')).days)).toEqual([19727, 19728, 19729, 19730]);
    expect(cat(frame.columns.get('cat')).levels).toEqual(['red', 'blue', 'green']);
    expect(frame.roles.get('when')).toBe('date');
    expect(frame.roles.get('num')).toBe('feature');
  });

  it('errors on a declared date or numeric column with a bad cell, naming line, column and value', async () => {
    const bad = await csvError(() => loadFrame(fixture('types.csv'), spec('y', { columns: [['baddate', 'date']] })));
    expect([bad.line, bad.columnName, bad.found]).toEqual([3, 'baddate', '"2023-02-30"']);
    expect(bad.hint).toBe('add it to data.missing or declare the column categorical');
    const text = await csvError(() => loadFrame(fixture('types.csv'), spec('y', { columns: [['mixed', 'numeric']] })));
    expect([text.line, text.column, text.columnName, text.found]).toEqual([3, 7, 'mixed', '"x"']);
    expect(text.hint).toBe('add it to data.missing or declare the column categorical');
    const declared = await loadFrame(fixture('types.csv'), spec('y', { columns: [['num', 'categorical'], ['when', 'protected']] }));
    expect(cat(declared.frame.columns.get('num')).levels).toEqual(['12', '-3.5', '1e-3', '.5']);
    expect(declared.frame.roles.get('when')).toBe('protected');
    expect(declared.inferred.get('when')).toBe('categorical');
  });

  it('never turns NaN / Infinity / overflow text into numbers', async () => {
    const nan = await csvError(() => loadFrame(fixture('nonfinite.csv'), spec('y')));
    expect([nan.line, nan.columnName, nan.found]).toEqual([3, 'a', '"NaN"']);
    expect(nan.hint).toBe('add it to data.missing or declare the column categorical');
    const inf = await csvError(() => loadFrame(fixture('infinity.csv'), spec('y')));
    expect([inf.line, inf.found]).toEqual([4, '"-Infinity"']);
    const over = await csvError(() => loadFrame(fixture('overflow.csv'), spec('y')));
    expect([over.line, over.found]).toEqual([3, '"1e400"']);
    const declared = await csvError(() => loadFrame(fixture('nonfinite.csv'), spec('y', { columns: [['a', 'numeric']] })));
    expect([declared.line, declared.expected]).toEqual([3, 'a finite number']);
    const asMissing = await loadFrame(fixture('nonfinite.csv'), spec('y', { missing: ['NaN'] }));
    expect(asMissing.inferred.get('a')).toBe('numeric');
    expect((await loadFrame(fixture('hex.csv'), spec('y'))).inferred.get('h')).toBe('categorical');
  });

  it('refuses an empty file, a header without rows and duplicate header names', async () => {
    expect((await csvError(() => loadFrame(fixture('empty.csv'), spec('y')))).found).toMatch(/empty file/);
    const headerOnly = await csvError(() => loadFrame(fixture('header-only.csv'), spec('y')));
    expect([headerOnly.line, headerOnly.expected]).toEqual([2, 'data rows after the header']);
    expect((await csvError(() => loadFrame(fixture('dup-header.csv'), spec('y')))).expected).toBe('distinct column names');
    expect((await csvError(() => loadFrame(fixture('binary.bin'), spec('y')))).found).toMatch(/looks binary/);
  });

  it('names unknown columns with the header and a did-you-mean', async () => {
    const typo = await csvError(() => loadFrame(fixture('labels.csv'), spec('statsu', { positive: 'bad' })));
    expect(typo.hint).toBe('did you mean "status"? the header has: "status", "x"');
    const caseOnly = await csvError(() => loadFrame(fixture('labels.csv'), spec('STATUS', { positive: 'bad' })));
    expect(caseOnly.hint).toMatch(/^did you mean "status"\?/);
    const far = await csvError(() => loadFrame(fixture('labels.csv'), spec('outcome')));
    expect(far.hint).toBe('the header has: "status", "x"');
    const col = await csvError(() => loadFrame(fixture('labels.csv'), spec('status', { positive: 'bad', columns: [['xx', 'numeric']] })));
    expect(col.expected).toBe('a column named "xx" (data.columns: numeric)');
    expect(col.hint).toMatch(/did you mean "x"\?/);
    const id = await csvError(() => loadFrame(fixture('labels.csv'), spec('status', { positive: 'bad', id: 'key' })));
    expect(id.expected).toMatch(/data.id/);
  });

  it('uses the id column text as ids and refuses duplicates with both lines', async () => {
    const err = await csvError(() => loadFrame(fixture('ids.csv'), spec('y', { id: 'key' })));
    expect(err.line).toBe(4);
    expect(err.found).toBe('"A-1", already used on line 2');
    const { frame } = await loadFrame(fixture('ignored.csv'), spec('y', { id: 'key' }));
    expect(frame.ids).toEqual(['k1', 'k2', 'k3']);
    expect(frame.roles.get('key')).toBe('id');
    expect(frame.columns.has('key')).toBe(false);
  });

  it('does not load ignored columns and keeps protected ones out of the features', async () => {
    const { frame, header } = await loadFrame(
      fixture('ignored.csv'),
      spec('y', { id: 'key', columns: [['secret', 'ignore'], ['age_band', 'protected']] }),
    );
    expect(header).toEqual(['key', 'y', 'age_band', 'secret', 'x']);
    expect([...frame.columns.keys()]).toEqual(['age_band', 'x']);
    expect(frame.roles.get('secret')).toBe('ignore');
    expect(frame.roles.get('age_band')).toBe('protected');
    expect(frame.roles.get('y')).toBe('target');
    expect(decode(cat(frame.columns.get('age_band')))).toEqual(['20-29', '30-39', '20-29']);
  });

  it('reports the sha256 of the file bytes as the digest', async () => {
    const { digest } = await loadFrame(fixture('types.csv'), spec('y'));
    expect(digest).toBe(createHash('sha256').update(readFileSync(fixture('types.csv'))).digest('hex'));
  });

  it('loads a file the same way at any chunk size', async () => {
    const small = await loadFrame(fixture('types.csv'), spec('y'), { highWaterMark: 3 });
    const large = await loadFrame(fixture('types.csv'), spec('y'));
    expect(small.frame.columns).toEqual(large.frame.columns);
    expect(small.digest).toBe(large.digest);
  });

  it('gives the same epoch days as pandas-derived weekdays for 40 edge-case dates', async () => {
    // Source: test/reference/date_parts.json, pandas 1.5.3 pd.Timestamp.isoweekday() (oracles scripts/date_parts.py).
    // 1970-01-01 is a Thursday (ISO weekday 4), so the ISO weekday of epoch day d is ((d + 3) mod 7) + 1.
    const ref = JSON.parse(readFileSync(join(REFERENCE, 'date_parts.json'), 'utf8')) as {
      expected: { rows: { date: string; iso_weekday: number; day_of_year: number }[] };
    };
    const rows = ref.expected.rows;
    const path = join(scratch, 'dates.csv');
    writeFileSync(path, 'y,d\n' + rows.map((r, i) => `${i % 2},${r.date}`).join('\n') + '\n');
    const { frame } = await loadFrame(path, spec('y'));
    const days = date(frame.columns.get('d')).days;
    rows.forEach((r, i) => {
      expect((((days[i] + 3) % 7) + 7) % 7 + 1, r.date).toBe(r.iso_weekday);
      expect(days[i], r.date).toBe(Date.UTC(Number(r.date.slice(0, 4)), Number(r.date.slice(5, 7)) - 1, Number(r.date.slice(8, 10))) / 86_400_000);
    });
  });

  it('loads credit_data.csv with the category counts, event counts and missing counts pandas reports', async () => {
    // Sources: test/reference/credit_data.csv (R modeldata 1.1.0 `credit_data`, 4454 rows); per-level n / n_pos from
    // pandas 1.5.3 groupby in test/reference/target_encoding_credit_home.json and ..._marital.json; missing
    // counts per column from the oracle data PROVENANCE.md (Income 381, Assets 47, Debt 18, Home 6, Job 2, Marital 1).
    const { frame, inferred } = await loadFrame(join(REFERENCE, 'credit_data.csv'), spec('Status', { positive: 'bad' }));
    expect(frame.nRows).toBe(4454);
    const events = frame.target.reduce((a, b) => a + b, 0);
    const home = JSON.parse(readFileSync(join(REFERENCE, 'target_encoding_credit_home.json'), 'utf8')) as {
      expected: { prior_all_rows: number; full_data_table: Record<string, { n: number; n_pos: number }> };
    };
    expect(events / frame.nRows).toBeCloseTo(home.expected.prior_all_rows, 12);
    for (const file of ['target_encoding_credit_home.json', 'target_encoding_credit_marital.json']) {
      const ref = JSON.parse(readFileSync(join(REFERENCE, file), 'utf8')) as {
        inputs: { category: string };
        expected: { full_data_table: Record<string, { n: number; n_pos: number }> };
      };
      const col = cat(frame.columns.get(ref.inputs.category));
      const got: Record<string, { n: number; n_pos: number }> = {};
      col.codes.forEach((k, row) => {
        const key = k < 0 ? '__MISSING__' : col.levels[k];
        got[key] ??= { n: 0, n_pos: 0 };
        got[key].n++;
        got[key].n_pos += frame.target[row];
      });
      const want = Object.fromEntries(Object.entries(ref.expected.full_data_table).map(([k, v]) => [k, { n: v.n, n_pos: v.n_pos }]));
      expect(got).toEqual(want);
    }
    const missingCount = (name: string): number => {
      const c = frame.columns.get(name);
      if (c?.type === 'numeric') return c.values.reduce((a, v) => a + (Number.isNaN(v) ? 1 : 0), 0);
      return cat(c).codes.reduce((a, k) => a + (k < 0 ? 1 : 0), 0);
    };
    expect(['Income', 'Assets', 'Debt', 'Home', 'Job', 'Marital', 'Seniority'].map(missingCount)).toEqual([381, 47, 18, 6, 2, 1, 0]);
    expect(['Home', 'Marital', 'Records', 'Job'].map((n) => inferred.get(n))).toEqual(Array(4).fill('categorical'));
    expect(['Seniority', 'Time', 'Age', 'Expenses', 'Income', 'Price'].map((n) => inferred.get(n))).toEqual(Array(6).fill('numeric'));
  });
});

describe('parseDecimal', () => {
  it('agrees with Number() on plain decimals and rejects other number syntaxes', () => {
    const ok = ['12', '-3.5', '1e-3', '.5', '5.', '+7', '-0', '0.1', '123456789012345', '1234567890123456789', '0.30000000000000004', '9007199254740993'];
    for (const s of ok) expect(Object.is(parseDecimal(s), Number(s)), s).toBe(true);
    // Clinger's fast path must give exactly Number()'s double: checked on 140k fixed-point texts.
    let mismatches = 0;
    for (let i = 0; i < 20_000; i++) {
      const x = (i - 10_000) * 0.000123456789 * (i % 2 === 0 ? 1 : 987.654321);
      for (let d = 0; d <= 12; d += 2) {
        const text = x.toFixed(d);
        if (!Object.is(parseDecimal(text), Number(text))) mismatches++;
      }
    }
    expect(mismatches).toBe(0);
    for (const s of ['0x10', '0b1', '0o7', 'Infinity', ' 1', '1 ', '', '.', '-', '1e', '1.2.3', '1_000', '--1']) {
      expect(parseDecimal(s), s).toBeNaN();
    }
  });
});

describe('csv writer', () => {
  it('formats numbers deterministically', () => {
    expect([NaN, 3, -0, 0.1, 1 / 3, 1e21, 1e-7, 2.5].map(formatNumber)).toEqual([
      '',
      '3',
      '0',
      '0.1',
      '0.3333333333333333',
      '1e+21',
      '1e-7',
      '2.5',
    ]);
  });

  it('quotes fields with commas, quotes, CR or LF only (RFC 4180 §2.6-2.7)', () => {
    expect(quoteField('plain')).toBe('plain');
    expect(quoteField('a,b')).toBe('"a,b"');
    expect(quoteField('say "hi"')).toBe('"say ""hi"""');
    expect(quoteField('two\nlines')).toBe('"two\nlines"');
    expect(quoteField('cr\r')).toBe('"cr\r"');
  });

  it('round-trips cells through writeCsvAtomic and readCsv, leaving no temporary file', async () => {
    const dir = mkdtempSync(join(scratch, 'rt-'));
    const path = join(dir, 'out.csv');
    const text = ['a,b', 'say "hi"', 'two\nlines', '', 'cr\r\nlf', 'é ü 中'];
    const x = new Float64Array([0.1, NaN, -2, 1e21, 1 / 3, 7]);
    const flag = new Uint8Array([0, 1, 1, 0, 1, 0]);
    const code = new Int32Array([-1, 0, 5, 2, 1, 3]);
    await writeCsvAtomic(path, ['text', 'x', 'flag', 'code'], [text, x, flag, code]);
    expect(readdirSync(dir)).toEqual(['out.csv']);
    const recs = await collect(path);
    expect(recs[0].fields).toEqual(['text', 'x', 'flag', 'code']);
    expect(recs.slice(1).map((r) => r.fields[0])).toEqual(text);
    const back = recs.slice(1).map((r) => (r.fields[1] === '' ? NaN : Number(r.fields[1])));
    expect(back).toEqual(Array.from(x));
    expect(recs.slice(1).map((r) => r.fields[2])).toEqual(['0', '1', '1', '0', '1', '0']);
    expect(recs.slice(1).map((r) => r.fields[3])).toEqual(['-1', '0', '5', '2', '1', '3']);
  });

  it('keeps the previous file when a write fails and removes its temporary file', async () => {
    const dir = mkdtempSync(join(scratch, 'fail-'));
    const path = join(dir, 'out.csv');
    writeFileSync(path, 'old\n');
    await expect(writeCsvAtomic(path, ['a', 'b'], [new Float64Array(2), new Float64Array(3)])).rejects.toThrow(/has 3 rows/);
    const throwing = ['x'] as unknown as string[];
    Object.defineProperty(throwing, 0, { get: () => { throw new Error('cell failed'); } });
    await expect(writeCsvAtomic(path, ['a'], [throwing])).rejects.toThrow('cell failed');
    expect(readFileSync(path, 'utf8')).toBe('old\n');
    expect(readdirSync(dir)).toEqual(['out.csv']);
    expect(existsSync(`${path}.tmp-${process.pid}`)).toBe(false);
  });

  it('keeps a single-column row with a missing value when read back', async () => {
    const path = join(scratch, 'one-col.csv');
    await writeCsvAtomic(path, ['x'], [new Float64Array([1, NaN, 3])]);
    expect((await collect(path)).map((r) => r.fields)).toEqual([['x'], ['1'], [''], ['3']]);
  });

  it('neutralizes spreadsheet formulas in text cells but leaves numbers alone (OWASP CSV Injection)', async () => {
    expect(['=1+2', '+SUM(A1)', '-2+3', '@cmd', '\tx', 'plain', '-3.5', '+7', ''].map(neutralizeFormula)).toEqual([
      "'=1+2",
      "'+SUM(A1)",
      "'-2+3",
      "'@cmd",
      "'\tx",
      'plain',
      '-3.5',
      '+7',
      '',
    ]);
    const path = join(scratch, 'formula.csv');
    await writeCsvAtomic(path, ['text', 'x'], [['=HYPERLINK("http://x")', 'ok'], new Float64Array([-1.5, 2])], {
      neutralizeFormulas: true,
    });
    const recs = await collect(path);
    expect(recs[1].fields).toEqual(["'=HYPERLINK(\"http://x\")", '-1.5']);
    expect(recs[2].fields).toEqual(['ok', '2']);
  });

  it('writes 1M rows in chunks and reads them back', async () => {
    const n = 1_000_000;
    const x = new Float64Array(n);
    for (let i = 0; i < n; i++) x[i] = i / 8;
    const path = join(scratch, 'million.csv');
    await writeCsvAtomic(path, ['x'], [x]);
    let i = -1;
    let bad = 0;
    for await (const r of readCsv(path)) {
      if (i >= 0 && Number(r.fields[0]) !== x[i]) bad++;
      i++;
    }
    expect(i).toBe(n);
    expect(bad).toBe(0);
  });
});
