import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { dateColumn, numeric, type Column, type FrameView } from '../pipeline/frame.js';
import {
  civilFromDays,
  dayOfYear,
  daysFromCivil,
  daysFromIsoString,
  daysInMonth,
  daysToNearestHoliday,
  federalHolidays,
  fiscalQuarter,
  fiscalYear,
  isLeapYear,
  isMonthEnd,
  isoStringFromDays,
  isoWeek,
  isoWeekYear,
  isoWeekday,
  isQuarterEnd,
  isWeekend,
  isYearEnd,
  observedDay,
  quarterOfMonth,
} from '../stages/core/calendar.js';
import { DATE_PART_SUFFIXES, DateLeakageError, DatesConfigError, datesStage, type DatesConfig } from '../stages/dates.js';
import { noDraws } from './helpers/seeded.js';

interface PartsRow {
  date: string;
  year: number;
  month: number;
  day: number;
  iso_weekday: number;
  weekday_sun0: number;
  is_weekend: boolean;
  iso_year: number;
  iso_week: number;
  quarter: number;
  day_of_year: number;
  days_in_month: number;
  is_leap_year: boolean;
  is_month_start: boolean;
  is_month_end: boolean;
  is_quarter_start: boolean;
  is_quarter_end: boolean;
  is_year_start: boolean;
  is_year_end: boolean;
  fiscal_year_oct: number;
  fiscal_quarter_oct: number;
}

interface HolidayRow {
  year: number;
  holiday: string;
  actual: string;
  observed: string;
  observed_in_previous_year: boolean;
}

const ref = (name: string): unknown => JSON.parse(readFileSync(new URL(`./reference/${name}`, import.meta.url), 'utf8'));
// pandas 1.5.3 (pd.Timestamp / pd.Period Q-SEP), cross-checked against Python 3.11.2 datetime: test/reference/date_parts.json
const parts = (ref('date_parts.json') as { expected: { rows: PartsRow[] } }).expected.rows;
// 5 U.S.C. 6103(a)/(b)(1), Executive Order 11582 §3(a); python3-holidays 0.10.1 compared: test/reference/us_federal_holidays_2015_2035.json
const holidayRef = (ref('us_federal_holidays_2015_2035.json') as {
  expected: { holidays: HolidayRow[]; observed_dates_sorted: string[]; count_per_year: Record<string, number> };
}).expected;

const noRng = noDraws('dates stage must not draw random numbers');

function viewOf(columns: Column[]): FrameView {
  const n = columns.length === 0 ? 0 : columns[0].type === 'date' ? columns[0].days.length : 0;
  return { columns: new Map(columns.map((c) => [c.name, c])), rows: Uint32Array.from({ length: n }, (_, i) => i) };
}

function dates(name: string, texts: (string | null)[]): Column {
  return dateColumn(name, Float64Array.from(texts, (t) => (t === null ? NaN : daysFromIsoString(t))));
}

function runStage(raw: unknown, columns: Column[]): Map<string, Float64Array> {
  const config = datesStage.resolveConfig(raw);
  const view = viewOf(columns);
  const inputs = datesStage.selectInputs(config, columns);
  const state = datesStage.fit({ view, target: new Uint8Array(view.rows.length), inputs, config, rng: noRng });
  // The state must survive the scoring bundle's JSON round trip unchanged.
  const restored = JSON.parse(JSON.stringify(state)) as typeof state;
  const out = datesStage.apply(restored, view, inputs);
  return new Map(
    out.map((c) => {
      if (c.type !== 'numeric') throw new Error(`non-numeric output ${c.name}`);
      return [c.name, c.values];
    }),
  );
}

describe('calendar engine vs pandas 1.5.3 date parts (40 edge-case dates)', () => {
  it.each(parts.map((r) => [r.date, r] as const))('%s', (text, r) => {
    const d = daysFromIsoString(text);
    const c = civilFromDays(d);
    const got = {
      year: c.year,
      month: c.month,
      day: c.day,
      iso_weekday: isoWeekday(d),
      weekday_sun0: isoWeekday(d) % 7,
      is_weekend: isWeekend(d),
      iso_year: isoWeekYear(d),
      iso_week: isoWeek(d),
      quarter: quarterOfMonth(c.month),
      day_of_year: dayOfYear(d),
      days_in_month: daysInMonth(c.year, c.month),
      is_leap_year: isLeapYear(c.year),
      // A month/quarter/year starts the day after one ends: checks the end tests from the other side.
      is_month_start: isMonthEnd(d - 1),
      is_month_end: isMonthEnd(d),
      is_quarter_start: isQuarterEnd(d - 1),
      is_quarter_end: isQuarterEnd(d),
      is_year_start: isYearEnd(d - 1),
      is_year_end: isYearEnd(d),
      // Fiscal year starting in October, named by the year it ends (31 U.S.C. 1102).
      fiscal_year_oct: fiscalYear(c.year, c.month, 10),
      fiscal_quarter_oct: fiscalQuarter(c.month, 10),
    };
    const expected = Object.fromEntries(Object.keys(got).map((k) => [k, r[k as keyof PartsRow]]));
    expect(got).toEqual(expected);
    expect(isoStringFromDays(d)).toBe(text);
  });

  it("Hinnant's days_from_civil/civil_from_days agree with ECMAScript Date.UTC over 1600..2400", () => {
    // Date.UTC implements the proleptic Gregorian calendar (ECMA-262 §21.4.1), an independent implementation.
    const start = daysFromCivil(1600, 1, 1);
    const end = daysFromCivil(2400, 12, 31);
    expect(start).toBe(Date.UTC(1600, 0, 1) / 86_400_000);
    for (let d = start; d <= end; d++) {
      const js = new Date(d * 86_400_000);
      const c = civilFromDays(d);
      if (c.year !== js.getUTCFullYear() || c.month !== js.getUTCMonth() + 1 || c.day !== js.getUTCDate()) {
        throw new Error(`civilFromDays(${d}) = ${JSON.stringify(c)} but Date says ${js.toISOString()}`);
      }
      if (daysFromCivil(c.year, c.month, c.day) !== d) throw new Error(`round trip fails at ${d}`);
    }
  });

  it('rejects impossible dates', () => {
    expect(daysFromIsoString('2023-02-29')).toBeNaN();
    expect(daysFromIsoString('2024-13-01')).toBeNaN();
    expect(daysFromIsoString('2024-1-01')).toBeNaN();
    expect(daysFromIsoString('2024-02-29')).toBe(19782);
  });
});

describe('US federal holidays 2015-2035 vs 5 U.S.C. 6103 (225 holidays)', () => {
  it('every holiday, actual and observed, equals the statute table', () => {
    const got: HolidayRow[] = [];
    for (let y = 2015; y <= 2035; y++) {
      const hs = federalHolidays(y);
      expect(hs.length).toBe(holidayRef.count_per_year[String(y)]);
      for (const h of hs) {
        got.push({
          year: h.year,
          holiday: h.name,
          actual: isoStringFromDays(h.actual),
          observed: isoStringFromDays(h.observed),
          observed_in_previous_year: civilFromDays(h.observed).year < h.year,
        });
      }
    }
    const expected = holidayRef.holidays.map(({ year, holiday, actual, observed, observed_in_previous_year }) => ({
      year,
      holiday,
      actual,
      observed,
      observed_in_previous_year,
    }));
    expect(got.length).toBe(225);
    expect(got).toEqual(expected);
  });

  it('weekend observance: Saturday → Friday before, Sunday → Monday after, across the year boundary', () => {
    // 5 U.S.C. 6103(b)(1): Independence Day 2015 fell on Saturday 4 July, observed Friday 3 July.
    expect(isoStringFromDays(observedDay(daysFromIsoString('2015-07-04')))).toBe('2015-07-03');
    // Executive Order 11582 §3(a): Christmas Day 2016 fell on Sunday 25 December, observed Monday 26 December.
    expect(isoStringFromDays(observedDay(daysFromIsoString('2016-12-25')))).toBe('2016-12-26');
    // 5 U.S.C. 6103(b)(1) at the year boundary: New Year's Day 2022 (a Saturday) is observed on Friday 31 December 2021.
    const nyd2022 = federalHolidays(2022)[0];
    expect(isoStringFromDays(nyd2022.observed)).toBe('2021-12-31');
    expect(daysToNearestHoliday(daysFromIsoString('2021-12-31'))).toBe(0);
    // Juneteenth (Pub. L. 117-17) is absent before 2021.
    expect(federalHolidays(2020).some((h) => h.name.startsWith('Juneteenth'))).toBe(false);
  });

  it('daysToNearestHoliday equals a brute-force search of the statute table (2016..2034)', () => {
    const observed = holidayRef.observed_dates_sorted.map(daysFromIsoString);
    // Days whose nearest holiday is surely inside the table's 2015..2035 span.
    for (let d = daysFromCivil(2016, 1, 1); d <= daysFromCivil(2034, 12, 31); d++) {
      let best = Infinity;
      for (const h of observed) {
        const diff = h - d;
        if (Math.abs(diff) < Math.abs(best) || (Math.abs(diff) === Math.abs(best) && diff > best)) best = diff;
      }
      if (daysToNearestHoliday(d) !== best) {
        throw new Error(`${isoStringFromDays(d)}: got ${daysToNearestHoliday(d)}, expected ${best}`);
      }
    }
    expect(daysToNearestHoliday(daysFromIsoString('2024-07-01'))).toBe(3);
    expect(daysToNearestHoliday(daysFromIsoString('2024-07-07'))).toBe(-3);
    expect(daysToNearestHoliday(NaN)).toBeNaN();
  });
});

describe('dates stage', () => {
  it('emits the parts of the pandas 1.5.3 edge-case dates, with an October fiscal year', () => {
    const col = dates('d', parts.map((r) => r.date));
    const out = runStage({ fiscal_start_month: 10 }, [col]);
    expect([...out.keys()]).toEqual(DATE_PART_SUFFIXES.map((s) => `d__${s}`));
    const b = (v: boolean): number => (v ? 1 : 0);
    parts.forEach((r, i) => {
      const got = DATE_PART_SUFFIXES.filter((s) => s !== 'days_to_holiday' && s !== 'holiday_season').map(
        (s) => out.get(`d__${s}`)![i],
      );
      expect(got, r.date).toEqual([
        r.day,
        r.iso_weekday,
        b(r.is_weekend),
        r.iso_week,
        r.month,
        r.quarter,
        r.day_of_year,
        b(r.is_month_end),
        b(r.is_quarter_end),
        b(r.is_year_end),
        r.fiscal_quarter_oct,
      ]);
    });
  });

  it('holiday distance and the holiday-window flag (window rule, observed dates)', () => {
    const col = dates('d', ['2024-07-04', '2024-07-11', '2024-07-12', '2021-12-30', '2025-06-16']);
    const out = runStage({ holiday_window_days: 7 }, [col]);
    // 2024-07-12 is 8 days after Independence Day; Labor Day (2024-09-02) is 52 days ahead.
    expect([...out.get('d__days_to_holiday')!]).toEqual([0, -7, -8, 1, 3]);
    expect([...out.get('d__holiday_season')!]).toEqual([1, 1, 0, 1, 1]);
    const narrow = runStage({ holiday_window_days: 2 }, [col]);
    expect([...narrow.get('d__holiday_season')!]).toEqual([1, 0, 0, 1, 0]);
  });

  it('pairs give b − a in days, missing dates give NaN everywhere', () => {
    const reg = dates('registered_on', ['2020-02-28', null, '2023-12-31', '2024-01-01']);
    const app = dates('applied_on', ['2020-03-01', '2024-05-05', null, '2024-03-01']);
    const out = runStage({ columns: ['applied_on'], pairs: [['registered_on', 'applied_on']] }, [reg, app]);
    expect([...out.keys()]).toEqual([...DATE_PART_SUFFIXES.map((s) => `applied_on__${s}`), 'registered_on__to__applied_on']);
    // 2020 is a leap year: 28 Feb → 1 Mar is 2 days; 1 Jan → 1 Mar 2024 is 31 + 29 = 60 days.
    const gap = out.get('registered_on__to__applied_on')!;
    expect(gap[0]).toBe(2);
    expect(gap[1]).toBeNaN();
    expect(gap[2]).toBeNaN();
    expect(gap[3]).toBe(60);
    for (const s of DATE_PART_SUFFIXES) {
      expect(out.get(`applied_on__${s}`)![2], s).toBeNaN();
      expect(out.get(`applied_on__${s}`)![1], s).not.toBeNaN();
    }
  });

  it('default columns = every date column, and the raw dates are replaced', () => {
    const cols = [dates('a', ['2024-01-01']), numeric('x', Float64Array.of(1)), dates('b', ['2024-01-02'])];
    const config = datesStage.resolveConfig(undefined);
    expect(datesStage.selectInputs(config, cols)).toEqual(['a', 'b']);
    expect(datesStage.replacesInputs).toBe(true);
    expect(datesStage.supervised).toBe(false);
    expect(runStage(undefined, cols).size).toBe(2 * DATE_PART_SUFFIXES.length);
  });

  it('a date later than the as_of date is target leakage: typed error with column, row and both dates', () => {
    const applied = dates('applied_on', ['2024-03-01', '2024-03-02', '2024-03-03']);
    const reg = dates('registered_on', ['2020-01-01', null, '2024-03-04']);
    const raw: Partial<DatesConfig> = { as_of: 'applied_on' };
    let caught: unknown;
    try {
      runStage(raw, [applied, reg]);
    } catch (e) {
      caught = e;
    }
    expect(caught).toBeInstanceOf(DateLeakageError);
    const err = caught as DateLeakageError;
    expect({ column: err.column, asOf: err.asOfColumn, row: err.row, date: err.date, asOfDate: err.asOfDate }).toEqual({
      column: 'registered_on',
      asOf: 'applied_on',
      row: 2,
      date: '2024-03-04',
      asOfDate: '2024-03-03',
    });
    expect(err.message).toContain('registered_on');
    // Equal dates and a missing date are not leakage.
    const ok = dates('registered_on', ['2024-03-01', null, '2024-03-03']);
    expect(() => runStage(raw, [applied, ok])).not.toThrow();
  });

  it('unknown or non-date columns in columns / pairs / as_of are config errors', () => {
    const cols = [dates('a', ['2024-01-01']), numeric('x', Float64Array.of(1))];
    const select = (raw: unknown): string[] => datesStage.selectInputs(datesStage.resolveConfig(raw), cols);
    const fieldOf = (raw: unknown): unknown => {
      try {
        select(raw);
      } catch (e) {
        return e instanceof DatesConfigError ? [e.field, e.column, e.reason] : e;
      }
      return 'no error';
    };
    expect(fieldOf({ columns: ['nope'] })).toEqual(['columns', 'nope', 'unknown column']);
    expect(fieldOf({ pairs: [['a', 'nope']] })).toEqual(['pairs', 'nope', 'unknown column']);
    expect(fieldOf({ as_of: 'nope' })).toEqual(['as_of', 'nope', 'unknown column']);
    expect(fieldOf({ columns: ['x'] })).toEqual(['columns', 'x', 'not a date column']);
    expect(() => datesStage.resolveConfig({ fiscal_start_month: 13 })).toThrow(/fiscal_start_month/);
    expect(() => datesStage.resolveConfig({ colums: ['a'] })).toThrow(/unknown option 'colums'/);
    expect(() => datesStage.resolveConfig({ pairs: [['a']] })).toThrow(/\[a, b\]/);
  });
});
