/**
 * Reading one CSV cell's text as a number or a date. Shared by the loader (type inference and
 * parsing) and the writer (deciding whether a text cell is a plain number that needs no formula
 * neutralization), so both agree on what "a number" means.
 */
import { daysFromCivil } from '../../stages/core/calendar.js';

const DIGIT_0 = 48;
const DIGIT_9 = 57;
const DOT = 46;
const PLUS = 43;
const MINUS = 45;
const LOWER_E = 101;
const UPPER_E = 69;
const COLON = 58;

/** Digits that always fit a double's 53-bit integer mantissa exactly. */
const MAX_FAST_DIGITS = 15;
/** Powers of ten up to 10^15: all exact doubles (every 10^k with k ≤ 22 is). */
const POW10 = Array.from({ length: MAX_FAST_DIGITS + 1 }, (_, k) => 10 ** k);

/**
 * The value of a plain decimal literal (`12`, `-3.5`, `.5`, `1e-3`, `+7`), NaN for anything else.
 *
 * Most cells are short fixed-point numbers: those are read by hand as an integer mantissa m
 * (at most 15 digits, so exact) divided by 10^k (k ≤ 22, exact), and one IEEE division of two
 * exact values is correctly rounded, i.e. the same double `Number()` returns (Clinger's fast path,
 * W. D. Clinger, "How to Read Floating Point Numbers Accurately", PLDI 1990).
 * Everything else goes to `Number()`, after a character check: `Number()` alone would also accept
 * hex, octal, binary, `Infinity` and surrounding whitespace. A literal too large for a double
 * (`1e400`) returns ±Infinity so callers can report it.
 */
export function parseDecimal(s: string): number {
  return parseDecimalRange(s, 0, s.length);
}

/** `parseDecimal(s.slice(start, end))` without making the slice in the common case. */
export function parseDecimalRange(s: string, start: number, end: number): number {
  if (start >= end) return NaN;
  let i = start;
  let c = s.charCodeAt(i);
  const negative = c === MINUS;
  if (negative || c === PLUS) i++;
  let mantissa = 0;
  let digits = 0;
  let fraction = -1;
  for (; i < end; i++) {
    c = s.charCodeAt(i);
    if (c >= DIGIT_0 && c <= DIGIT_9) {
      mantissa = mantissa * 10 + (c - DIGIT_0);
      digits++;
      if (fraction >= 0) fraction++;
    } else if (c === DOT && fraction < 0) {
      fraction = 0;
    } else {
      break;
    }
  }
  if (i === end && digits > 0 && digits <= MAX_FAST_DIGITS) {
    const value = fraction > 0 ? mantissa / POW10[fraction] : mantissa;
    return negative ? -value : value;
  }
  for (let j = start; j < end; j++) {
    c = s.charCodeAt(j);
    if ((c < DIGIT_0 || c > DIGIT_9) && c !== DOT && c !== MINUS && c !== PLUS && c !== LOWER_E && c !== UPPER_E) {
      return NaN;
    }
  }
  return Number(s.slice(start, end));
}

const NON_FINITE_TOKENS = new Set(['nan', 'inf', 'infinity']);

/**
 * True for spellings of NaN and infinity that other tools write into number columns (`NaN`,
 * `Infinity`, `-inf`, ...). The loader refuses them rather than guessing what they meant.
 */
export function isNonFiniteToken(s: string): boolean {
  if (s.length < 3 || s.length > 9) return false;
  const c = s.charCodeAt(0);
  const body = c === PLUS || c === MINUS ? s.slice(1) : s;
  return NON_FINITE_TOKENS.has(body.toLowerCase());
}

function twoDigits(s: string, at: number): number {
  const a = s.charCodeAt(at) - DIGIT_0;
  const b = s.charCodeAt(at + 1) - DIGIT_0;
  // Written so that NaN (reading past the end) also fails.
  if (!(a >= 0 && a <= 9 && b >= 0 && b <= 9)) return -1;
  return a * 10 + b;
}

function isLeapYear(y: number): boolean {
  return (y % 4 === 0 && y % 100 !== 0) || y % 400 === 0;
}

const DAYS_IN_MONTH = [31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31];

/**
 * Checks an ISO 8601 extended time of day (`HH:MM`, `HH:MM:SS`, `HH:MM:SS.fff`) with an optional
 * `Z` or `±HH:MM` / `±HHMM` offset, starting at `at`. The loader drops the time; this only makes
 * sure the cell really is a timestamp and not a date followed by unrelated text.
 */
function isTimeOfDay(s: string, at: number): boolean {
  const n = s.length;
  if (n < at + 5 || twoDigits(s, at) < 0 || twoDigits(s, at) > 23) return false;
  if (s.charCodeAt(at + 2) !== COLON) return false;
  const mm = twoDigits(s, at + 3);
  if (mm < 0 || mm > 59) return false;
  let i = at + 5;
  if (i < n && s.charCodeAt(i) === COLON) {
    const ss = twoDigits(s, i + 1);
    // 60 allows a leap second (ISO 8601).
    if (ss < 0 || ss > 60) return false;
    i += 3;
    if (i < n && s.charCodeAt(i) === DOT) {
      i++;
      const fracStart = i;
      while (i < n && s.charCodeAt(i) >= DIGIT_0 && s.charCodeAt(i) <= DIGIT_9) i++;
      if (i === fracStart) return false;
    }
  }
  if (i === n) return true;
  const c = s.charCodeAt(i);
  if (c === 90 /* Z */) return i + 1 === n;
  if (c !== PLUS && c !== MINUS) return false;
  const oh = twoDigits(s, i + 1);
  if (oh < 0 || oh > 23) return false;
  i += 3;
  if (i === n) return true;
  if (s.charCodeAt(i) === COLON) i++;
  const om = twoDigits(s, i);
  return om >= 0 && om <= 59 && i + 2 === n;
}

/**
 * Epoch days (UTC) of an ISO 8601 calendar date `YYYY-MM-DD`, optionally followed by `T` or a
 * space and a time of day, which is dropped: the calendar date is taken as written, whatever the
 * offset. NaN when the text is not such a date or names a day that does not exist (2023-02-30).
 */
export function parseIsoDate(s: string): number {
  const n = s.length;
  if (n < 10 || s.charCodeAt(4) !== MINUS || s.charCodeAt(7) !== MINUS) return NaN;
  const hi = twoDigits(s, 0);
  const lo = twoDigits(s, 2);
  const month = twoDigits(s, 5);
  const day = twoDigits(s, 8);
  if (hi < 0 || lo < 0 || month < 1 || month > 12 || day < 1) return NaN;
  const year = hi * 100 + lo;
  const maxDay = month === 2 && isLeapYear(year) ? 29 : DAYS_IN_MONTH[month - 1];
  if (day > maxDay) return NaN;
  if (n > 10) {
    const sep = s.charCodeAt(10);
    if ((sep !== 84 /* T */ && sep !== 32) || !isTimeOfDay(s, 11)) return NaN;
  }
  return daysFromCivil(year, month, day);
}
