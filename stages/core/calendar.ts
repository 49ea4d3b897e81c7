/**
 * Calendar arithmetic on epoch days (integer days since 1970-01-01, proleptic Gregorian, UTC).
 *
 * Plain dates only: no time of day and no time zone ever enters, so daylight-saving change days
 * behave like every other day. Conversions use Howard Hinnant's `days_from_civil` /
 * `civil_from_days` algorithms ("chrono-Compatible Low-Level Date Algorithms",
 * http://howardhinnant.github.io/date_algorithms.html), which are exact over the whole
 * proleptic Gregorian calendar with integer arithmetic only: no Date objects in hot loops.
 *
 * US federal holidays are computed from their rules in 5 U.S.C. 6103(a), with the weekend
 * observance rules of 5 U.S.C. 6103(b)(1) (Saturday → the Friday before) and Executive Order
 * 11582 §3(a) (Sunday → the Monday after). The current list is applied to every year except
 * Juneteenth, which starts in 2021 (Pub. L. 117-17); earlier history (e.g. the 1971 Monday
 * moves, King's birthday from 1986) is not modelled.
 */

/** Days per 400-year Gregorian era. */
const DAYS_PER_ERA = 146097;
/** Epoch days of 0000-03-01, the start of Hinnant's shifted (March-based) era 0. */
const EPOCH_SHIFT = 719468;

/** Epoch days of a proleptic Gregorian civil date (Hinnant's `days_from_civil`). */
export function daysFromCivil(year: number, month: number, day: number): number {
  // The year is shifted to start in March so the leap day is the last day of the shifted year.
  const y = month <= 2 ? year - 1 : year;
  const era = Math.floor(y / 400);
  const yoe = y - era * 400;
  const doy = Math.floor((153 * (month + (month > 2 ? -3 : 9)) + 2) / 5) + day - 1;
  const doe = yoe * 365 + Math.floor(yoe / 4) - Math.floor(yoe / 100) + doy;
  return era * DAYS_PER_ERA + doe - EPOCH_SHIFT;
}

/**
 * Hinnant's `civil_from_days`, writing [year, month, day] into `out` so per-row loops allocate
 * nothing. `days` must be an integer.
 */
export function civilInto(days: number, out: Int32Array): void {
  const z = days + EPOCH_SHIFT;
  const era = Math.floor(z / DAYS_PER_ERA);
  const doe = z - era * DAYS_PER_ERA;
  const yoe = Math.floor((doe - Math.floor(doe / 1460) + Math.floor(doe / 36524) - Math.floor(doe / 146096)) / 365);
  const doy = doe - (365 * yoe + Math.floor(yoe / 4) - Math.floor(yoe / 100));
  const mp = Math.floor((5 * doy + 2) / 153);
  const d = doy - Math.floor((153 * mp + 2) / 5) + 1;
  const m = mp < 10 ? mp + 3 : mp - 9;
  out[0] = yoe + era * 400 + (m <= 2 ? 1 : 0);
  out[1] = m;
  out[2] = d;
}

export interface CivilDate {
  readonly year: number;
  readonly month: number;
  readonly day: number;
}

/** Convenience form of {@link civilInto} for code outside per-row loops. */
export function civilFromDays(days: number): CivilDate {
  const out = new Int32Array(3);
  civilInto(days, out);
  return { year: out[0], month: out[1], day: out[2] };
}

/** Year of an epoch day without building a date object. */
export function yearOfDays(days: number): number {
  const z = days + EPOCH_SHIFT;
  const era = Math.floor(z / DAYS_PER_ERA);
  const doe = z - era * DAYS_PER_ERA;
  const yoe = Math.floor((doe - Math.floor(doe / 1460) + Math.floor(doe / 36524) - Math.floor(doe / 146096)) / 365);
  const doy = doe - (365 * yoe + Math.floor(yoe / 4) - Math.floor(yoe / 100));
  // Shifted days-of-year 306 and later are January and February of the next civil year.
  return yoe + era * 400 + (doy >= 306 ? 1 : 0);
}

export function isLeapYear(year: number): boolean {
  return (year % 4 === 0 && year % 100 !== 0) || year % 400 === 0;
}

const MONTH_LENGTHS = [31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31] as const;

export function daysInMonth(year: number, month: number): number {
  return month === 2 && isLeapYear(year) ? 29 : MONTH_LENGTHS[month - 1];
}

/** ISO 8601 weekday: Monday = 1 .. Sunday = 7 (1970-01-01 was a Thursday). */
export function isoWeekday(days: number): number {
  return ((((days + 3) % 7) + 7) % 7) + 1;
}

export function isWeekend(days: number): boolean {
  return isoWeekday(days) >= 6;
}

/** Day of the year, 1 = January 1. */
export function dayOfYear(days: number): number {
  return days - daysFromCivil(yearOfDays(days), 1, 1) + 1;
}

/**
 * ISO 8601 week-numbering year: the calendar year of the Thursday of the day's Monday-based week,
 * so 1-3 January can belong to the previous ISO year and 29-31 December to the next.
 */
export function isoWeekYear(days: number): number {
  return yearOfDays(days - isoWeekday(days) + 4);
}

/** ISO 8601 week number (1..53); week 1 contains the year's first Thursday. Pair it with {@link isoWeekYear}. */
export function isoWeek(days: number): number {
  const thursday = days - isoWeekday(days) + 4;
  return Math.floor((thursday - daysFromCivil(yearOfDays(thursday), 1, 1)) / 7) + 1;
}

/** Calendar quarter of a month (January-March = 1). */
export function quarterOfMonth(month: number): number {
  return Math.floor((month - 1) / 3) + 1;
}

/**
 * Scratch for the period-end tests: JavaScript runs one module instance per thread, so a module
 * buffer is safe and keeps those tests allocation-free.
 */
const scratch = new Int32Array(3);

/** Last day of its month (the real month length: 29 February in leap years). */
export function isMonthEnd(days: number): boolean {
  civilInto(days + 1, scratch);
  return scratch[2] === 1;
}

/** Last day of March, June, September or December. */
export function isQuarterEnd(days: number): boolean {
  civilInto(days + 1, scratch);
  return scratch[2] === 1 && (scratch[1] - 1) % 3 === 0;
}

export function isYearEnd(days: number): boolean {
  civilInto(days + 1, scratch);
  return scratch[2] === 1 && scratch[1] === 1;
}

function checkFiscalStart(firstMonth: number): void {
  if (!Number.isInteger(firstMonth) || firstMonth < 1 || firstMonth > 12) {
    throw new RangeError(`fiscal first month must be an integer 1..12, got ${firstMonth}`);
  }
}

/**
 * Fiscal year for a fiscal year that starts on the first day of `firstMonth`, named by the
 * calendar year in which it ends (as 31 U.S.C. 1102 names the US federal fiscal year:
 * FY2025 = 2024-10-01 .. 2025-09-30). With `firstMonth` = 1 it is the calendar year.
 */
export function fiscalYear(year: number, month: number, firstMonth: number): number {
  checkFiscalStart(firstMonth);
  return firstMonth > 1 && month >= firstMonth ? year + 1 : year;
}

/** Fiscal quarter (1..4) counted from `firstMonth`: ((month − firstMonth) mod 12) div 3 + 1. */
export function fiscalQuarter(month: number, firstMonth: number): number {
  checkFiscalStart(firstMonth);
  return Math.floor((((month - firstMonth) % 12) + 12) % 12 / 3) + 1;
}

/** Epoch days of the n-th (1-based) given ISO weekday of a month. */
export function nthWeekdayOfMonth(year: number, month: number, weekday: number, n: number): number {
  const first = daysFromCivil(year, month, 1);
  const offset = (weekday - isoWeekday(first) + 7) % 7;
  return first + offset + 7 * (n - 1);
}

/** Epoch days of the last given ISO weekday of a month. */
export function lastWeekdayOfMonth(year: number, month: number, weekday: number): number {
  const last = daysFromCivil(year, month, daysInMonth(year, month));
  return last - ((isoWeekday(last) - weekday + 7) % 7);
}

/**
 * The day a holiday is observed by employees with a Monday-Friday workweek: Saturday → the Friday
 * before (5 U.S.C. 6103(b)(1)); Sunday → the Monday after (Executive Order 11582 §3(a)).
 */
export function observedDay(actual: number): number {
  const wd = isoWeekday(actual);
  if (wd === 6) return actual - 1;
  if (wd === 7) return actual + 1;
  return actual;
}

export interface FederalHoliday {
  /** Statutory name in 5 U.S.C. 6103(a). */
  readonly name: string;
  /** The holiday year the statute assigns it to. */
  readonly year: number;
  /** Epoch days of the date the statute names. */
  readonly actual: number;
  /**
   * Epoch days of the observed day off. New Year's Day on a Saturday is observed on 31 December
   * of the previous calendar year, so this can fall outside `year`.
   */
  readonly observed: number;
}

const MON = 1;
const THU = 4;
const JUNETEENTH_FIRST_YEAR = 2021;

/** The legal public holidays of 5 U.S.C. 6103(a) for one holiday year, in calendar order. */
export function federalHolidays(year: number): FederalHoliday[] {
  const rules: [string, number][] = [
    ["New Year's Day", daysFromCivil(year, 1, 1)],
    ['Birthday of Martin Luther King, Jr.', nthWeekdayOfMonth(year, 1, MON, 3)],
    ["Washington's Birthday", nthWeekdayOfMonth(year, 2, MON, 3)],
    ['Memorial Day', lastWeekdayOfMonth(year, 5, MON)],
  ];
  if (year >= JUNETEENTH_FIRST_YEAR) rules.push(['Juneteenth National Independence Day', daysFromCivil(year, 6, 19)]);
  rules.push(
    ['Independence Day', daysFromCivil(year, 7, 4)],
    ['Labor Day', nthWeekdayOfMonth(year, 9, MON, 1)],
    ['Columbus Day', nthWeekdayOfMonth(year, 10, MON, 2)],
    ['Veterans Day', daysFromCivil(year, 11, 11)],
    ['Thanksgiving Day', nthWeekdayOfMonth(year, 11, THU, 4)],
    ['Christmas Day', daysFromCivil(year, 12, 25)],
  );
  return rules.map(([name, actual]) => ({ name, year, actual, observed: observedDay(actual) }));
}

/**
 * Per calendar year: the sorted observed holidays of holiday years y−1, y and y+1. The nearest
 * observed holiday to any day of year y is always among them (the longest gap between observed
 * holidays, February to late May, is under 110 days). Built once per year, then shared.
 */
const nearbyHolidayCache = new Map<number, Float64Array>();

function nearbyObservedHolidays(year: number): Float64Array {
  let cached = nearbyHolidayCache.get(year);
  if (cached === undefined) {
    const days: number[] = [];
    for (let y = year - 1; y <= year + 1; y++) for (const h of federalHolidays(y)) days.push(h.observed);
    cached = Float64Array.from(days).sort();
    nearbyHolidayCache.set(year, cached);
  }
  return cached;
}

/**
 * Signed days from `days` to the nearest observed federal holiday: 0 on the holiday, positive
 * when it lies ahead (e.g. +3 = three days before it), negative when it has passed. When one
 * holiday is as near before as another after, the upcoming one wins (positive).
 * NaN in, NaN out.
 */
export function daysToNearestHoliday(days: number): number {
  if (Number.isNaN(days)) return NaN;
  const list = nearbyObservedHolidays(yearOfDays(days));
  let best = Infinity;
  for (let i = 0; i < list.length; i++) {
    const diff = list[i] - days;
    const a = Math.abs(diff);
    const b = Math.abs(best);
    if (a < b || (a === b && diff > best)) best = diff;
  }
  return best;
}

/** Epoch days of a `YYYY-MM-DD` string, or NaN when it is not a valid calendar date. */
export function daysFromIsoString(text: string): number {
  const m = /^(-?\d{4,})-(\d{2})-(\d{2})$/.exec(text);
  if (m === null) return NaN;
  const year = Number(m[1]);
  const month = Number(m[2]);
  const day = Number(m[3]);
  if (month < 1 || month > 12 || day < 1 || day > daysInMonth(year, month)) return NaN;
  return daysFromCivil(year, month, day);
}

function pad2(n: number): string {
  return n < 10 ? `0${n}` : String(n);
}

/** `YYYY-MM-DD` for an epoch day ("NaN" for a missing one, for messages). */
export function isoStringFromDays(days: number): string {
  if (Number.isNaN(days)) return 'NaN';
  const c = civilFromDays(days);
  return `${String(c.year).padStart(4, '0')}-${pad2(c.month)}-${pad2(c.day)}`;
}
