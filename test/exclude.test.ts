import { describe, expect, it } from 'vitest';
import { categorical, dateColumn, numeric, type Column, type Frame, type Role } from '../pipeline/frame.js';
import { daysFromCivil } from '../stages/core/calendar.js';
import { ExclusionColumnError, ExclusionRuleError, applyExclusions, resolveExclusions } from '../stages/exclude.js';

// Hand-built frame, 10 rows; every expected count below is worked out by hand from these arrays.
//   row:        0      1      2      3      4      5      6      7      8      9
//   channel:  web    branch broker  web    (miss) broker web    branch web    broker
//   amount:   500    1200   NaN    80     3000   950    40     NaN    1500   700
//   applied: 2019-12-31 2020-01-01 2020-06-15 NaN 2021-03-01 2019-01-10 2020-01-02 2022-07-04 2020-12-31 2018-05-05
//   target:     1      0      1     0      1      0      0      1      1      0
function frame(): Frame {
  const d = (y: number, m: number, day: number): number => daysFromCivil(y, m, day);
  const cols: Column[] = [
    categorical('channel', Int32Array.of(0, 1, 2, 0, -1, 2, 0, 1, 0, 2), ['web', 'branch', 'broker']),
    numeric('amount', Float64Array.of(500, 1200, NaN, 80, 3000, 950, 40, NaN, 1500, 700)),
    dateColumn(
      'applied',
      Float64Array.of(d(2019, 12, 31), d(2020, 1, 1), d(2020, 6, 15), NaN, d(2021, 3, 1), d(2019, 1, 10), d(2020, 1, 2), d(2022, 7, 4), d(2020, 12, 31), d(2018, 5, 5)),
    ),
  ];
  const roles: [string, Role][] = [
    ['channel', 'feature'],
    ['amount', 'feature'],
    ['applied', 'date'],
  ];
  return {
    nRows: 10,
    columns: new Map(cols.map((c) => [c.name, c])),
    roles: new Map(roles),
    target: Uint8Array.of(1, 0, 1, 0, 1, 0, 0, 1, 1, 0),
    ids: Array.from({ length: 10 }, (_, i) => String(i)),
    targetLabels: { positive: 'bad', negative: 'good' },
  };
}

function excludedRows(keep: Uint8Array): number[] {
  const out: number[] = [];
  keep.forEach((k, i) => {
    if (k === 0) out.push(i);
  });
  return out;
}

function run(raw: unknown): ReturnType<typeof applyExclusions> {
  return applyExclusions(frame(), resolveExclusions(raw));
}

describe('applyExclusions: each condition type', () => {
  it('in: excludes listed levels, never missing', () => {
    const { keep, report } = run([{ reason: 'closed channel', column: 'channel', in: ['broker'] }]);
    expect(excludedRows(keep)).toEqual([2, 5, 9]);
    expect(report).toEqual([{ reason: 'closed channel', column: 'channel', condition: 'in [broker]', rows: 3, events: 1, event_rate: 1 / 3 }]);
  });

  it('not_in: excludes other levels, never missing (SQL-like)', () => {
    const { keep, report } = run([{ reason: 'web only', column: 'channel', not_in: ['web'] }]);
    expect(excludedRows(keep)).toEqual([1, 2, 5, 7, 9]);
    expect(report[0].events).toBe(2);
    expect(report[0].condition).toBe('not in [web]');
  });

  it('below / above on a numeric column are strict and skip missing', () => {
    const below = run([{ reason: 'tiny', column: 'amount', below: 500 }]);
    expect(excludedRows(below.keep)).toEqual([3, 6]);
    expect(below.report[0]).toMatchObject({ condition: 'below 500', rows: 2, events: 0, event_rate: 0 });
    const above = run([{ reason: 'huge', column: 'amount', above: 1200 }]);
    expect(excludedRows(above.keep)).toEqual([4, 8]);
    expect(above.report[0]).toMatchObject({ rows: 2, events: 2, event_rate: 1 });
  });

  it('below / above on a date column take YYYY-MM-DD and are strict', () => {
    const { keep, report } = run([
      { reason: 'before policy', column: 'applied', below: '2020-01-01' },
      { reason: 'after cut-off', column: 'applied', above: '2020-12-31' },
    ]);
    // below 2020-01-01: rows 0 (2019-12-31), 5, 9; the 2020-01-01 row stays. above 2020-12-31: rows 4, 7.
    expect(excludedRows(keep)).toEqual([0, 4, 5, 7, 9]);
    expect(report.map((r) => r.condition)).toEqual(['below 2020-01-01', 'above 2020-12-31']);
    expect(report.map((r) => [r.rows, r.events])).toEqual([
      [3, 1],
      [2, 2],
    ]);
  });

  it('missing: true on numeric, categorical and date columns', () => {
    expect(excludedRows(run([{ reason: 'm', column: 'amount', missing: true }]).keep)).toEqual([2, 7]);
    expect(excludedRows(run([{ reason: 'm', column: 'channel', missing: true }]).keep)).toEqual([4]);
    expect(excludedRows(run([{ reason: 'm', column: 'applied', missing: true }]).keep)).toEqual([3]);
  });

  it('no rules keeps every row', () => {
    const { keep, report } = run(undefined);
    expect(excludedRows(keep)).toEqual([]);
    expect(report).toEqual([]);
  });
});

describe('applyExclusions: overlapping rules', () => {
  it('counts each excluded row once, under the first rule that excludes it', () => {
    const { keep, report } = run([
      { reason: 'closed channel', column: 'channel', in: ['broker'] }, // rows 2, 5, 9
      { reason: 'no amount', column: 'amount', missing: true }, // rows 2, 7 → only 7 is new
      { reason: 'old', column: 'applied', below: '2020-01-01' }, // rows 0, 5, 9 → only 0 is new
      { reason: 'broker again', column: 'channel', in: ['broker'] }, // nothing new
    ]);
    expect(excludedRows(keep)).toEqual([0, 2, 5, 7, 9]);
    expect(report.map((r) => [r.rows, r.events, r.event_rate])).toEqual([
      [3, 1, 1 / 3],
      [1, 1, 1],
      [1, 1, 1],
      [0, 0, null],
    ]);
    const total = report.reduce((s, r) => s + r.rows, 0);
    expect(total).toBe(excludedRows(keep).length);
  });
});

describe('resolveExclusions: bad rules', () => {
  it('requires exactly one condition', () => {
    expect(() => resolveExclusions([{ reason: 'r', column: 'amount' }])).toThrow(/exactly one condition.*none/);
    expect(() => resolveExclusions([{ reason: 'r', column: 'amount', below: 1, above: 5 }])).toThrow(/got below, above/);
  });

  it('checks the value type of each condition', () => {
    const bad: unknown[] = [
      { reason: 'r', column: 'c', in: 'web' },
      { reason: 'r', column: 'c', in: [] },
      { reason: 'r', column: 'c', not_in: [1, 2] },
      { reason: 'r', column: 'c', below: '2020-13-01' },
      { reason: 'r', column: 'c', above: '01/02/2020' },
      { reason: 'r', column: 'c', above: Infinity },
      { reason: 'r', column: 'c', missing: false },
      { reason: 'r', column: 'c', missing: 'yes' },
    ];
    for (const rule of bad) expect(() => resolveExclusions([rule]), JSON.stringify(rule)).toThrow(ExclusionRuleError);
  });

  it('requires a reason and a column, rejects unknown keys with a hint, and non-lists', () => {
    expect(() => resolveExclusions([{ column: 'c', missing: true }])).toThrow(/reason/);
    expect(() => resolveExclusions([{ reason: ' ', column: 'c', missing: true }])).toThrow(/reason/);
    expect(() => resolveExclusions([{ reason: 'r', missing: true }])).toThrow(/column/);
    expect(() => resolveExclusions([{ reason: 'r', column: 'c', notin: ['a'] }])).toThrow(/did you mean 'not_in'/);
    expect(() => resolveExclusions({ reason: 'r' })).toThrow(/list of rules/);
    try {
      resolveExclusions([{ reason: 'ok', column: 'c', missing: true }, 42]);
      expect.unreachable();
    } catch (e) {
      expect(e).toBeInstanceOf(ExclusionRuleError);
      expect((e as ExclusionRuleError).index).toBe(1);
    }
  });
});

describe('applyExclusions: rules that do not fit the data', () => {
  it('names an unknown column with a did-you-mean', () => {
    try {
      run([{ reason: 'r', column: 'ammount', below: 5 }]);
      expect.unreachable();
    } catch (e) {
      expect(e).toBeInstanceOf(ExclusionColumnError);
      const err = e as ExclusionColumnError;
      expect(err.column).toBe('ammount');
      expect(err.suggestion).toBe('amount');
      expect(err.message).toMatch(/did you mean 'amount'/);
    }
    try {
      run([{ reason: 'r', column: 'zzzzzz', below: 5 }]);
      expect.unreachable();
    } catch (e) {
      expect((e as ExclusionColumnError).suggestion).toBeNull();
    }
  });

  it('rejects conditions that do not fit the column type', () => {
    expect(() => run([{ reason: 'r', column: 'amount', in: ['500'] }])).toThrow(/categorical column/);
    expect(() => run([{ reason: 'r', column: 'channel', below: 3 }])).toThrow(/numeric or date/);
    expect(() => run([{ reason: 'r', column: 'applied', below: 18000 }])).toThrow(/YYYY-MM-DD/);
    expect(() => run([{ reason: 'r', column: 'amount', below: '2020-01-01' }])).toThrow(/is a date/);
  });

  it('rejects a level the column does not have, with a did-you-mean', () => {
    expect(() => run([{ reason: 'r', column: 'channel', in: ['brokr'] }])).toThrow(/'brokr' is not a level.*did you mean 'broker'/);
  });

  it('enforces one condition on rules built in code', () => {
    expect(() => applyExclusions(frame(), [{ reason: 'r', column: 'amount', below: 1, missing: true }])).toThrow(ExclusionRuleError);
  });
});
