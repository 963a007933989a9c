/**
 * Calendar arithmetic checked against an independent day count: the Julian Day Number formula of
 * Fliegel & Van Flandern, "A machine algorithm for processing calendar dates", Communications of
 * the ACM 11(10), 1968, p. 657 (integer arithmetic, Gregorian calendar). The Unix epoch
 * 1970-01-01 is JDN 2440588 (JD 2440587.5 at midnight; from memory, and it agrees with the
 * formula). Leap years follow the Gregorian rule (every 4th year, except centuries not divisible
 * by 400).
 */
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import {
  addMonths,
  checkDate,
  daysBetween,
  dayNumber,
  fromDayNumber,
  isLeapYear,
  resolveSpec,
} from '../../src/request/dates.js';

/** Fliegel & Van Flandern (1968): Julian Day Number of a Gregorian date (integer division). */
function jdn(y: number, m: number, d: number): number {
  const q = (a: number, b: number) => Math.trunc(a / b);
  const a = q(m - 14, 12);
  return q(1461 * (y + 4800 + a), 4) + q(367 * (m - 2 - 12 * a), 12) - q(3 * q(y + 4900 + a, 100), 4) + d - 32075;
}

/** Days in a month, written out independently of src (Gregorian rule). */
function monthLength(y: number, m: number): number {
  const leap = y % 400 === 0 || (y % 4 === 0 && y % 100 !== 0);
  return [31, leap ? 29 : 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31][m - 1];
}

const iso = (y: number, m: number, d: number) =>
  `${String(y).padStart(4, '0')}-${String(m).padStart(2, '0')}-${String(d).padStart(2, '0')}`;

const validDate = fc
  .record({ y: fc.integer({ min: 1900, max: 2200 }), m: fc.integer({ min: 1, max: 12 }), d: fc.integer({ min: 1, max: 31 }) })
  .filter(({ y, m, d }) => d <= monthLength(y, m));

describe('day numbers', () => {
  it('the epochs: 1970-01-01 is day 0, JDN 2440588; 2000-01-01 is JDN 2451545', () => {
    expect(dayNumber('1970-01-01')).toBe(0);
    expect(jdn(1970, 1, 1)).toBe(2440588);
    expect(jdn(2000, 1, 1)).toBe(2451545); // J2000.0 = JD 2451545.0 at noon (from memory)
    expect(dayNumber('2000-01-01')).toBe(2451545 - 2440588);
  });

  it('agrees with the Fliegel–Van Flandern day count on random dates (1900–2200)', () => {
    fc.assert(
      fc.property(validDate, ({ y, m, d }) => {
        expect(dayNumber(iso(y, m, d))).toBe(jdn(y, m, d) - 2440588);
        expect(fromDayNumber(jdn(y, m, d) - 2440588)).toBe(iso(y, m, d));
      }),
      { seed: 20261201, numRuns: 3000 },
    );
  });

  it('year lengths: 366 in 2000, 2024, 2028; 365 in 1900, 2100, 2027', () => {
    const len = (y: number) => daysBetween(iso(y, 1, 1), iso(y + 1, 1, 1));
    for (const y of [2000, 2024, 2028]) expect(len(y)).toBe(366);
    for (const y of [1900, 2100, 2027]) expect(len(y)).toBe(365);
    for (const y of [1900, 2000, 2024, 2027, 2100]) expect(isLeapYear(y)).toBe(len(y) === 366);
  });

  it('the docs/design.md §2 example: 2027-01-04 to 2027-03-19 is 74 days (27 + 28 + 19), to 2027-02-15 is 42', () => {
    expect(daysBetween('2027-01-04', '2027-03-19')).toBe(74);
    expect(daysBetween('2027-01-04', '2027-02-15')).toBe(42);
  });
});

describe('checkDate', () => {
  it('accepts exactly the days of the Gregorian calendar', () => {
    fc.assert(
      fc.property(
        fc.integer({ min: 1900, max: 2200 }),
        fc.integer({ min: 0, max: 13 }),
        fc.integer({ min: 0, max: 32 }),
        (y, m, d) => {
          const valid = m >= 1 && m <= 12 && d >= 1 && d <= monthLength(y, m);
          expect(checkDate(iso(y, m, d)).ok).toBe(valid);
        },
      ),
      { seed: 7, numRuns: 3000 },
    );
  });
});

describe('spans (months clamp to the month end)', () => {
  it('month-end cases', () => {
    expect(addMonths('2027-01-31', 1)).toBe('2027-02-28');
    expect(addMonths('2028-01-31', 1)).toBe('2028-02-29');
    expect(addMonths('2027-03-31', 1)).toBe('2027-04-30');
    expect(addMonths('2027-10-31', 4)).toBe('2028-02-29');
    expect(addMonths('2027-12-15', 1)).toBe('2028-01-15');
    expect(addMonths('2027-01-15', -1)).toBe('2026-12-15');
    expect(resolveSpec({ span: 1, unit: 'y' }, '2028-02-29')).toBe('2029-02-28');
    expect(resolveSpec({ span: 4, unit: 'y' }, '2028-02-29')).toBe('2032-02-29');
  });

  it('days and weeks add calendar days across month and year ends', () => {
    expect(resolveSpec({ span: 30, unit: 'd' }, '2027-12-15')).toBe('2028-01-14');
    expect(resolveSpec({ span: 6, unit: 'w' }, '2028-02-01')).toBe('2028-03-14'); // 42 days, 2028 leap: 28 + 14
    expect(resolveSpec({ span: 1, unit: 'd' }, '2028-02-28')).toBe('2028-02-29');
  });

  it('a month span lands in the right month with the day clamped (property)', () => {
    fc.assert(
      fc.property(validDate, fc.integer({ min: 0, max: 120 }), ({ y, m, d }, n) => {
        const out = addMonths(iso(y, m, d), n);
        const idx = y * 12 + (m - 1) + n;
        const ty = Math.floor(idx / 12);
        const tm = (idx % 12) + 1;
        expect(out).toBe(iso(ty, tm, Math.min(d, monthLength(ty, tm))));
      }),
      { seed: 11, numRuns: 2000 },
    );
  });

  it('day spans are exact day counts (property)', () => {
    fc.assert(
      fc.property(validDate, fc.integer({ min: 1, max: 20000 }), ({ y, m, d }, n) => {
        const from = iso(y, m, d);
        expect(daysBetween(from, resolveSpec({ span: n, unit: 'd' }, from))).toBe(n);
      }),
      { seed: 13, numRuns: 2000 },
    );
  });
});
