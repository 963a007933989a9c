/**
 * Volatility and drift from a price history: the published worked example, the validation codes,
 * and the coverage of the stated standard errors on seeded synthetic walks.
 */
import { describe, expect, it } from 'vitest';
import { appendCloses, checkCloses, dayNumber, estimateHistory, type Close } from '../../src/core/history.js';
import { normals } from '../support/rng.js';

// Hull, Options, Futures, and Other Derivatives, "Estimating volatility from historical data"
// (worked example of 21 daily closes; values from memory)
const HULL = [
  20.0, 20.1, 19.9, 20.0, 20.5, 20.25, 20.9, 20.9, 20.9, 20.75, 20.75, 21.0, 21.1, 20.9, 20.9, 21.25, 21.4, 21.4, 21.25, 21.75, 22.0,
];
const undated = (xs: number[]): Close[] => xs.map((close) => ({ close }));

/** ISO days of `count` consecutive weekdays from `start` (a Monday). */
function weekdays(start: string, count: number): string[] {
  const out: string[] = [];
  let t = Date.parse(`${start}T00:00:00Z`);
  while (out.length < count) {
    const d = new Date(t);
    const wd = d.getUTCDay();
    if (wd !== 0 && wd !== 6) out.push(d.toISOString().slice(0, 10));
    t += 86_400_000;
  }
  return out;
}

describe('the worked example (Hull, estimating volatility from historical data; from memory)', () => {
  const e = estimateHistory(undated(HULL));
  it('Σu = 0.09531, Σu² = 0.00326 over 20 returns', () => {
    expect(e.n).toBe(21);
    expect(e.returns).toBe(20);
    expect(e.sumU).toBeCloseTo(0.09531, 5);
    expect(e.sumU2).toBeCloseTo(0.00326, 5);
  });
  it('daily s.d. 0.01216, 19.3% a year over 252 trading days, standard error about 0.031', () => {
    expect(e.sdReturn).toBeCloseTo(0.01216, 5);
    expect(e.volTradingDays).toBeCloseTo(0.193, 3);
    expect(e.volSe).toBeCloseTo(0.0305, 3); // 0.193/√40
  });
  it('without dates the closes are consecutive trading days: the two clocks agree', () => {
    expect(e.dated).toBe(false);
    expect(e.first).toBeNull();
    expect(e.years).toBeCloseTo(20 / 252, 14);
    expect(e.vol).toBeCloseTo(e.volTradingDays, 14);
    expect(e.driftTradingDays).toBeCloseTo(e.drift, 12);
  });
  it('μ̂ = Σu/T + σ̂²/2 (+ yield), its standard error σ̂/√T (Var Σu = σ²T)', () => {
    const T = 20 / 252;
    expect(e.priceDrift).toBeCloseTo(0.09531 / T, 3);
    expect(e.drift).toBeCloseTo(0.09531 / T + 0.5 * e.vol ** 2, 3);
    expect(e.driftSe).toBeCloseTo(e.vol / Math.sqrt(T), 12);
    const withYield = estimateHistory(undated(HULL), 0.012);
    expect(withYield.drift - e.drift).toBeCloseTo(0.012, 14);
    expect(e.warnings.some((w) => w.startsWith('short history'))).toBe(true);
    expect(e.warnings.some((w) => w.startsWith('only 20 returns'))).toBe(true);
  });
  it('with dates on consecutive weekdays: calendar clock beside the trading-day check', () => {
    const dates = weekdays('2026-01-05', 21); // Mon 5 Jan … Mon 2 Feb 2026: 28 calendar days
    const d = estimateHistory(HULL.map((close, i) => ({ date: dates[i], close })));
    expect(d.first).toBe('2026-01-05');
    expect(d.last).toBe('2026-02-02');
    expect(d.years).toBeCloseTo(28 / 365, 14);
    expect(d.volTradingDays).toBeCloseTo(e.volTradingDays, 14);
    expect(d.vol).toBeCloseTo(0.01216 * Math.sqrt(20 / (28 / 365)), 3);
    expect(Math.abs(d.vol / d.volTradingDays - 1)).toBeLessThan(0.03); // 20 returns in 28 days ≈ 261 a year
  });
});

describe('validation codes', () => {
  const good = weekdays('2026-01-05', 12).map((date, i) => ({ date, close: 80 + i }));
  it('accepts a clean list', () => expect(checkCloses(good)).toBeNull());
  it('non-positive and non-numeric prices', () => {
    expect(checkCloses(undated([...HULL.slice(0, 3), 0, ...HULL.slice(4)]))).toMatchObject({ code: 'price', index: 3 });
    expect(checkCloses(undated([...HULL.slice(0, 5), -2, ...HULL.slice(6)]))).toMatchObject({ code: 'price', index: 5 });
    expect(checkCloses(undated([...HULL.slice(0, 5), NaN, ...HULL.slice(6)]))).toMatchObject({ code: 'price', index: 5 });
  });
  it('dates out of order, repeated, not real, or missing on some closes', () => {
    const swap = good.map((c) => ({ ...c }));
    [swap[4].date, swap[5].date] = [swap[5].date, swap[4].date];
    expect(checkCloses(swap)).toMatchObject({ code: 'order', index: 5 });
    const rep = good.map((c, i) => (i === 7 ? { ...c, date: good[6].date } : c));
    expect(checkCloses(rep)).toMatchObject({ code: 'repeat', index: 7 });
    const bad = good.map((c, i) => (i === 2 ? { ...c, date: '2026-02-30' } : c));
    expect(checkCloses(bad)).toMatchObject({ code: 'date', index: 2 });
    const mixed = good.map((c, i) => (i === 3 ? { close: c.close } : c));
    expect(checkCloses(mixed)).toMatchObject({ code: 'mixed', index: 3 });
  });
  it('fewer than 10 closes', () => {
    expect(checkCloses(undated(HULL.slice(0, 9)))).toMatchObject({ code: 'few', index: 9 });
    expect(checkCloses(undated(HULL.slice(0, 10)))).toBeNull();
  });
  it('more than 20 years', () => {
    const long = [{ date: '2000-01-03', close: 10 }, ...good.map((c) => ({ ...c, date: c.date.replace('2026', '2021') }))];
    expect(checkCloses(long)).toMatchObject({ code: 'span', index: 0 });
    expect(checkCloses(undated(Array.from({ length: 20 * 252 + 1 }, (_, i) => 50 + (i % 7))))).toBeNull();
    expect(checkCloses(undated(Array.from({ length: 20 * 252 + 2 }, (_, i) => 50 + (i % 7))))).toMatchObject({ code: 'span' });
  });
  it('day numbers: leap days and the epoch (Date.UTC)', () => {
    expect(dayNumber('1970-01-01')).toBe(0);
    expect(dayNumber('2028-02-29')! - dayNumber('2028-02-28')!).toBe(1);
    expect(dayNumber('2027-02-29')).toBeNull();
    expect(dayNumber('2027-2-28')).toBeNull();
  });
});

describe('warnings', () => {
  it('a long gap, a big move, and closes that are not daily', () => {
    const dates = weekdays('2026-01-05', 30);
    const closes = dates.map((date, i) => ({ date, close: i === 20 ? 140 : 100 + (i % 3) }));
    closes[29].date = '2026-03-20';
    const e = estimateHistory(closes);
    expect(e.warnings.some((w) => w.startsWith('a gap of'))).toBe(true);
    expect(e.warnings.some((w) => w.startsWith('a move of'))).toBe(true);
    const weekly = Array.from({ length: 60 }, (_, i) => ({
      date: new Date(Date.UTC(2025, 0, 6 + 7 * i)).toISOString().slice(0, 10),
      close: 100 * Math.exp(0.03 * Math.sin(i)),
    }));
    const w = estimateHistory(weekly);
    expect(w.returnsPerYear).toBeCloseTo(365 / 7, 6);
    expect(w.warnings.some((x) => x.includes('not 252'))).toBe(true);
  });
});

/**
 * Coverage of μ̂ ± 1.96·s.e. and σ̂ ± 1.96·s.e. over many seeded walks with known μ and σ: the
 * fraction of intervals holding the truth is binomial(K, 0.95); we ask for 4 of its standard
 * errors (and σ̂/√(2m) is a large-sample figure, so m is kept at 250 or more).
 */
function coverage(opts: { K: number; m: number; dt: number; dated: boolean; mu: number; sigma: number; q: number; seed: number }) {
  const { K, m, dt, dated, mu, sigma, q } = opts;
  const nu = mu - q - 0.5 * sigma * sigma;
  let inVol = 0;
  let inDrift = 0;
  const z = normals(opts.seed, K * m);
  for (let k = 0; k < K; k++) {
    const closes: Close[] = [];
    let x = Math.log(80);
    const start = Date.UTC(2025, 0, 1);
    closes.push(dated ? { date: new Date(start).toISOString().slice(0, 10), close: Math.exp(x) } : { close: Math.exp(x) });
    for (let i = 1; i <= m; i++) {
      x += nu * dt + sigma * Math.sqrt(dt) * z[k * m + i - 1];
      const c = Math.exp(x);
      closes.push(dated ? { date: new Date(start + i * 86_400_000).toISOString().slice(0, 10), close: c } : { close: c });
    }
    expect(checkCloses(closes)).toBeNull();
    const e = estimateHistory(closes, q);
    if (Math.abs(e.vol - sigma) <= 1.96 * e.volSe) inVol++;
    if (Math.abs(e.drift - mu) <= 1.96 * e.driftSe) inDrift++;
  }
  const band = 4 * Math.sqrt((0.95 * 0.05) / K);
  return { vol: inVol / K, drift: inDrift / K, band };
}

describe('stated standard errors hold at the right frequency (seeded synthetic walks)', () => {
  it('undated closes, 252 trading days a year: two years of a 30%-vol walk', () => {
    const c = coverage({ K: 600, m: 504, dt: 1 / 252, dated: false, mu: 0.09, sigma: 0.3, q: 0.01, seed: 2026 });
    expect(Math.abs(c.vol - 0.95)).toBeLessThan(c.band);
    expect(Math.abs(c.drift - 0.95)).toBeLessThan(c.band);
  });
  it('dated closes every calendar day (time = days/365): one year of a 45%-vol walk', () => {
    const c = coverage({ K: 600, m: 365, dt: 1 / 365, dated: true, mu: -0.05, sigma: 0.45, q: 0, seed: 77 });
    expect(Math.abs(c.vol - 0.95)).toBeLessThan(c.band);
    expect(Math.abs(c.drift - 0.95)).toBeLessThan(c.band);
  });
});

describe('appending closes to a stored history', () => {
  const d = (date: string, close: number) => ({ date, close });
  it('dated: a re-sent stretch replaces the stored one; later closes extend it', () => {
    const stored = [d('2026-01-05', 1), d('2026-01-06', 2), d('2026-01-07', 3)];
    expect(appendCloses(stored, [d('2026-01-07', 3.5), d('2026-01-08', 4)])).toEqual([d('2026-01-05', 1), d('2026-01-06', 2), d('2026-01-07', 3.5), d('2026-01-08', 4)]);
    expect(appendCloses(stored, [d('2026-01-09', 5)])).toEqual([...stored, d('2026-01-09', 5)]);
    expect(appendCloses([], stored)).toEqual(stored);
    expect(appendCloses(stored, [])).toEqual(stored);
  });
  it('undated closes follow the stored ones; dated and undated do not mix', () => {
    expect(appendCloses([{ close: 1 }], [{ close: 2 }])).toEqual([{ close: 1 }, { close: 2 }]);
    expect(appendCloses([{ close: 1 }], [d('2026-01-05', 2)])).toBeNull();
  });
});
