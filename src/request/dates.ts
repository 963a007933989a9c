/**
 * Calendar dates for requests: ISO yyyy-mm-dd strings, validated against the proleptic
 * Gregorian calendar, spans (`30d`, `6w`, `3m`, `1y`) added to a date, and day counts.
 *
 * Conventions (docs/design.md §3 and decisions recorded in DEVELOPERS.md):
 * - time in years = calendar days / 365;
 * - `Nm` adds N calendar months, `Ny` adds 12·N months; when the day does not exist in the target
 *   month it is clamped to the month's last day (2027-01-31 + 1m = 2027-02-28,
 *   2028-02-29 + 1y = 2029-02-28);
 * - `Nd` adds N days, `Nw` adds 7·N days.
 * - Dates may also be written the way Kolmo prints them, `19Mar27` (day, month, two- or four-digit
 *   year; two digits mean 20yy), and as month codes, `Mar27`, the third Friday of that month (the
 *   usual expiry of monthly options; common practice).
 *
 * All arithmetic is done on UTC day numbers, so no time zone or daylight-saving shift can move a date.
 */

import type { ExpirySpec } from './types.js';

/** Earliest and latest year a request may name (anything outside is a typo). */
export const MIN_YEAR = 1900;
export const MAX_YEAR = 2200;

import { DAY_MS as MS_PER_DAY } from '../core/units.js';

export function isLeapYear(y: number): boolean {
  return (y % 4 === 0 && y % 100 !== 0) || y % 400 === 0;
}

export function daysInMonth(y: number, m: number): number {
  if (m === 2) return isLeapYear(y) ? 29 : 28;
  return m === 4 || m === 6 || m === 9 || m === 11 ? 30 : 31;
}

export interface YMD {
  y: number;
  m: number;
  d: number;
}

export type DateCheck = { ok: true; date: string } | { ok: false; reason: string; suggestion?: string };

const ISO = /^(\d{4})-(\d{2})-(\d{2})$/;
/** Shapes that look like a date but are not ISO: 2027-3-19, 2027/03/19, 19.03.2027, 03/19/2027 */
const NEAR_ISO = /^(\d{4})[-/.](\d{1,2})[-/.](\d{1,2})$/;
const DAY_FIRST = /^(\d{1,2})[-/.](\d{1,2})[-/.](\d{4})$/;
/** As Kolmo prints dates: 19Mar27 (or 19Mar2027). */
const SHORT = /^(\d{1,2})([A-Za-z]{3})(\d{2}|\d{4})$/;
/** A month code: Mar27 (or Mar2027), the third Friday of the month. */
const MONTH_CODE = /^([A-Za-z]{3})(\d{2}|\d{4})$/;
const MONTHS = ['jan', 'feb', 'mar', 'apr', 'may', 'jun', 'jul', 'aug', 'sep', 'oct', 'nov', 'dec'];

function monthOf(word: string): number {
  return MONTHS.indexOf(word.toLowerCase()) + 1;
}

function yearOfShort(y: string): number {
  return y.length === 2 ? 2000 + Number(y) : Number(y);
}

/** The third Friday of a month (monthly options expire then; common practice). */
export function thirdFriday(y: number, m: number): string {
  const dow = new Date(Date.UTC(y, m - 1, 1)).getUTCDay(); // 0 Sunday … 5 Friday
  const first = 1 + ((5 - dow + 7) % 7);
  return formatYMD({ y, m, d: first + 14 });
}

function pad2(n: number): string {
  return n < 10 ? `0${n}` : String(n);
}

export function formatYMD({ y, m, d }: YMD): string {
  return `${String(y).padStart(4, '0')}-${pad2(m)}-${pad2(d)}`;
}

/** Is the token shaped like a date at all (ISO or a near miss)? Used to give a date-specific error. */
export function looksLikeDate(token: string): boolean {
  return (
    ISO.test(token) ||
    NEAR_ISO.test(token) ||
    DAY_FIRST.test(token) ||
    (SHORT.test(token) && monthOf(SHORT.exec(token)![2]) > 0) ||
    (MONTH_CODE.test(token) && monthOf(MONTH_CODE.exec(token)![1]) > 0)
  );
}

function checkParts(y: number, m: number, d: number): string | null {
  if (y < MIN_YEAR || y > MAX_YEAR) return `the year ${y} is outside ${MIN_YEAR}–${MAX_YEAR}`;
  if (m < 1 || m > 12) return `there is no month ${m}`;
  if (d < 1 || d > daysInMonth(y, m)) {
    if (m === 2 && d === 29) return `${y} is not a leap year: February has 28 days`;
    return `month ${m} of ${y} has ${daysInMonth(y, m)} days, not ${d}`;
  }
  return null;
}

/** Validate an ISO date token (yyyy-mm-dd); near misses get a reason and, when clear, a fix. */
export function checkDate(token: string): DateCheck {
  const iso = ISO.exec(token);
  if (iso) {
    const [y, m, d] = [Number(iso[1]), Number(iso[2]), Number(iso[3])];
    const bad = checkParts(y, m, d);
    return bad ? { ok: false, reason: bad } : { ok: true, date: token };
  }
  const near = NEAR_ISO.exec(token);
  if (near) {
    const [y, m, d] = [Number(near[1]), Number(near[2]), Number(near[3])];
    const fix = checkParts(y, m, d) === null ? formatYMD({ y, m, d }) : undefined;
    return { ok: false, reason: 'dates are written yyyy-mm-dd', suggestion: fix };
  }
  const dayFirst = DAY_FIRST.exec(token);
  if (dayFirst) {
    // Day-first and month-first are both common; only suggest when one reading is impossible.
    const [a, b, y] = [Number(dayFirst[1]), Number(dayFirst[2]), Number(dayFirst[3])];
    const asDM = checkParts(y, b, a) === null ? formatYMD({ y, m: b, d: a }) : undefined;
    const asMD = checkParts(y, a, b) === null ? formatYMD({ y, m: a, d: b }) : undefined;
    const fix = asDM && asMD && asDM !== asMD ? undefined : (asDM ?? asMD);
    return { ok: false, reason: 'dates are written yyyy-mm-dd (year first)', suggestion: fix };
  }
  const short = SHORT.exec(token);
  if (short && monthOf(short[2]) > 0) {
    const [y, m, d] = [yearOfShort(short[3]), monthOf(short[2]), Number(short[1])];
    const bad = checkParts(y, m, d);
    return bad ? { ok: false, reason: bad } : { ok: true, date: formatYMD({ y, m, d }) };
  }
  const code = MONTH_CODE.exec(token);
  if (code && monthOf(code[1]) > 0) {
    const [y, m] = [yearOfShort(code[2]), monthOf(code[1])];
    const bad = checkParts(y, m, 1);
    return bad ? { ok: false, reason: bad } : { ok: true, date: thirdFriday(y, m) };
  }
  return { ok: false, reason: 'not a date' };
}

export function parseYMD(date: string): YMD {
  const m = ISO.exec(date);
  if (!m) throw new Error(`not an ISO date: ${date}`);
  return { y: Number(m[1]), m: Number(m[2]), d: Number(m[3]) };
}

/** Day number (days since 1970-01-01, UTC) of an ISO date. */
export function dayNumber(date: string): number {
  const { y, m, d } = parseYMD(date);
  return Math.round(Date.UTC(y, m - 1, d) / MS_PER_DAY);
}

export function fromDayNumber(n: number): string {
  const t = new Date(n * MS_PER_DAY);
  return formatYMD({ y: t.getUTCFullYear(), m: t.getUTCMonth() + 1, d: t.getUTCDate() });
}

/** Calendar days from `a` to `b` (negative when b is before a). */
export function daysBetween(a: string, b: string): number {
  return dayNumber(b) - dayNumber(a);
}

/** Add N calendar months, clamping the day to the target month's length. */
export function addMonths(date: string, months: number): string {
  const { y, m, d } = parseYMD(date);
  const index = y * 12 + (m - 1) + months;
  const ty = Math.floor(index / 12);
  const tm = index - ty * 12 + 1;
  return formatYMD({ y: ty, m: tm, d: Math.min(d, daysInMonth(ty, tm)) });
}

export function addDays(date: string, days: number): string {
  return fromDayNumber(dayNumber(date) + days);
}

/** Turn an expiry as written into a date, counting spans from `asof`. */
export function resolveSpec(spec: ExpirySpec, asof: string): string {
  if ('date' in spec) return spec.date;
  // a horizon in minutes or hours: the day it falls on (whole days from asof)
  if ('minutes' in spec) return addDays(asof, Math.floor(spec.minutes / (24 * 60)));
  switch (spec.unit) {
    case 'd':
      return addDays(asof, spec.span);
    case 'w':
      return addDays(asof, 7 * spec.span);
    case 'm':
      return addMonths(asof, spec.span);
    case 'y':
      return addMonths(asof, 12 * spec.span);
  }
}

/** Year of an ISO date. */
export function yearOf(date: string): number {
  return parseYMD(date).y;
}
