/**
 * The outcome engine (src/core/outcome.ts) against facts outside it: risk-neutral valuation (an
 * option's value is its discounted expected payoff under the risk-neutral walk, and its discounted
 * price is a martingale — Hull, Options, Futures and Other Derivatives, chapters on the
 * Black-Scholes-Merton model and risk-neutral valuation), closed-form lognormal expectations
 * (Black's formula for the undiscounted expected payoff), the jstat library's normal and
 * lognormal distributions in the central range, payoff facts of common positions (common
 * practice), and a brute-force P&L cdf written here.
 */
import { createRequire } from 'node:module';
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { bsmValue } from '../../src/core/bsm.js';
import { runCheck } from '../../src/core/outcome.js';
import type { CheckCore, CheckInput, LegInput } from '../../src/core/types.js';
import { pnlFn } from '../support/positions.js';

const require = createRequire(import.meta.url);
const { jStat } = require('jstat') as {
  jStat: {
    normal: { cdf(x: number, m: number, s: number): number };
    lognormal: { pdf(x: number, mu: number, s: number): number; cdf(x: number, mu: number, s: number): number; inv(p: number, mu: number, s: number): number };
  };
};
const N = (x: number): number => jStat.normal.cdf(x, 0, 1);


function scaleOf(input: CheckInput): number {
  return input.legs.reduce((t, l) => t + Math.abs(l.qty) * (l.kind === 'shares' ? 1 : input.mult), 0) * input.market.spot;
}

function allFinite(r: CheckCore): boolean {
  const nums: number[] = [];
  const walk = (v: unknown): void => {
    if (typeof v === 'number') nums.push(v);
    else if (Array.isArray(v)) v.forEach(walk);
    else if (v && typeof v === 'object') Object.values(v).forEach(walk);
  };
  walk(r);
  return nums.every(Number.isFinite);
}

const market = { spot: 100, rate: 0.045, yield: 0.01 };
const call = (qty: number, strike: number, years: number, iv: number, entry: number | null = null): LegInput => ({ qty, kind: 'call', strike, years, iv, entry });
const put = (qty: number, strike: number, years: number, iv: number, entry: number | null = null): LegInput => ({ qty, kind: 'put', strike, years, iv, entry });
const shares = (qty: number, entry: number | null = null): LegInput => ({ qty, kind: 'shares', strike: 0, years: 0, iv: 0, entry });

function check(legs: LegInput[], horizonYears: number, view: { drift: number; vol: number }, m = market): CheckInput {
  return { market: m, legs, mult: 100, style: 'european', horizonYears, view };
}

describe('risk-neutral identity: with drift = rate and view vol = iv, expected P&L = entry vs fair + carry (Hull, risk-neutral valuation)', () => {
  const iv = 0.27;
  const rnView = { drift: market.rate, vol: iv };
  const cases: [string, CheckInput][] = [
    ['long call at expiry', check([call(1, 105, 0.5, iv)], 0.5, rnView)],
    ['vertical spread at expiry, entries off fair value', check([call(2, 95, 0.25, iv, 8.1), call(-2, 110, 0.25, iv, 1.2)], 0.25, rnView)],
    ['iron condor at expiry', check([put(1, 80, 0.3, iv), put(-1, 90, 0.3, iv), call(-1, 110, 0.3, iv), call(1, 120, 0.3, iv)], 0.3, rnView)],
    ['calendar before expiry (sticky strike, martingale)', check([call(-1, 100, 0.2, iv), call(1, 100, 0.5, iv)], 0.2, rnView)],
    ['four live legs before expiry', check([put(1, 85, 0.4, iv, 1.5), put(-2, 92, 0.6, iv), call(-1, 108, 0.5, iv), call(3, 115, 0.9, iv, 4)], 0.15, rnView)],
    ['married put with shares before expiry', check([shares(100, 99), put(1, 95, 0.75, iv)], 0.3, rnView)],
  ];
  for (const [name, input] of cases) {
    it(name, () => {
      const r = runCheck(input);
      const o = r.outcome;
      const tol = 1e-9 * scaleOf(input);
      const a = o.attribution;
      // one iv = the market vol, drift = rate: only the entry prices and carry are left
      expect(a.earlyExercise).toBe(0);
      expect(Math.abs(o.expectedPnl - (a.entryVsFair + a.carry))).toBeLessThan(tol);
      expect(Math.abs(a.legIv)).toBeLessThan(tol);
      expect(Math.abs(o.expectedPnlAtRate - o.expectedPnl)).toBeLessThan(1e-12 * scaleOf(input));
      expect(Math.abs(a.vol)).toBeLessThan(tol);
      expect(Math.abs(a.entryVsFair + a.carry + a.earlyExercise + a.legIv + a.vol + a.drift - o.expectedPnl)).toBeLessThan(1e-9);
      expect(allFinite(r)).toBe(true);
    });
  }
});

describe('long call at expiry (closed forms derived here)', () => {
  const S = 100, K = 105, c = 3.2, h = 0.5, mu = 0.11, q = 0.01, sv = 0.3;
  const input = check([call(1, K, h, 0.28, c)], h, { drift: mu, vol: sv });
  const r = runCheck(input);
  it('breakeven is strike + premium (P&L undiscounted, no financing)', () => {
    expect(r.outcome.breakevens).toHaveLength(1);
    expect(r.outcome.breakevens[0]).toBeCloseTo(K + c, 12);
  });
  it('chance of profit = P(S_h > K + premium) = Φ(d), lognormal view (jstat normal cdf)', () => {
    const d = (Math.log(S / (K + c)) + (mu - q - 0.5 * sv * sv) * h) / (sv * Math.sqrt(h));
    expect(Math.abs(r.outcome.probProfit - N(d))).toBeLessThan(1e-12);
  });
  it("expected P&L = mult·(F Φ(d1) − K Φ(d2) − premium), F = S e^{(μ−q)h} (Black's undiscounted formula)", () => {
    const F = S * Math.exp((mu - q) * h);
    const sd = sv * Math.sqrt(h);
    const d1 = (Math.log(F / K) + 0.5 * sd * sd) / sd;
    const want = 100 * (F * N(d1) - K * N(d1 - sd) - c);
    expect(Math.abs(r.outcome.expectedPnl - want)).toBeLessThan(1e-9 * S * 100);
  });
  it('loss is limited to the premium, gain is unbounded (common practice)', () => {
    expect(r.outcome.maxLoss).toBeCloseTo(-100 * c, 9);
    expect(r.outcome.maxGain).toBeNull();
  });
  it('legs: risk-neutral probability of exercise is N(d2) at the leg iv, the view one uses μ and the view vol (Hull)', () => {
    const iv = 0.28;
    const d2 = (Math.log(S / K) + (market.rate - q - 0.5 * iv * iv) * h) / (iv * Math.sqrt(h));
    expect(Math.abs(r.legs[0].probItmRiskNeutral - N(d2))).toBeLessThan(1e-12);
    const d2v = (Math.log(S / K) + (mu - q - 0.5 * sv * sv) * h) / (sv * Math.sqrt(h));
    expect(Math.abs(r.legs[0].probItmView - N(d2v))).toBeLessThan(1e-12);
    expect(Math.abs(r.legs[0].value - bsmValue({ kind: 'call', S, K, T: h, r: market.rate, q, sigma: iv }))).toBeLessThan(1e-12);
    expect(r.position.cost).toBeCloseTo(100 * c, 9);
  });
});

describe('vertical spread at expiry: atoms at max loss and max gain', () => {
  const h = 0.25, sv = 0.25, mu = 0.0;
  const input = check([call(1, 100, h, 0.26, 5.2), call(-1, 110, h, 0.24, 1.8)], h, { drift: mu, vol: sv });
  const r = runCheck(input);
  const o = r.outcome;
  const lmu = Math.log(100) + (mu - market.yield - 0.5 * sv * sv) * h;
  const ls = sv * Math.sqrt(h);
  const pLoss = jStat.lognormal.cdf(100, lmu, ls);
  const pGain = 1 - jStat.lognormal.cdf(110, lmu, ls);
  it('max loss = −debit, max gain = width − debit (common practice)', () => {
    expect(o.maxLoss).toBeCloseTo(-340, 9);
    expect(o.maxGain).toBeCloseTo(660, 9);
    expect(o.breakevens).toHaveLength(1);
    expect(o.breakevens[0]).toBeCloseTo(103.4, 10);
  });
  it('lower quantiles land exactly on the atoms; the others invert the lognormal (jstat)', () => {
    expect(pLoss).toBeGreaterThan(0.5); // so p05, p25, p50 sit in the loss atom
    expect(pGain).toBeGreaterThan(0.05); // and p95 in the gain atom
    expect(o.pnlQuantiles.p05).toBe(-340);
    expect(o.pnlQuantiles.p25).toBe(-340);
    expect(o.pnlQuantiles.p50).toBe(-340);
    expect(o.pnlQuantiles.p95).toBe(660);
    const s75 = jStat.lognormal.inv(0.75, lmu, ls);
    expect(s75).toBeGreaterThan(100);
    expect(s75).toBeLessThan(110);
    expect(Math.abs(o.pnlQuantiles.p75 - (100 * (s75 - 100) - 340))).toBeLessThan(1e-6 * scaleOf(input));
    expect(o.tailMean05).toBe(-340);
  });
  it('chance of profit and the listed atoms match the lognormal (jstat)', () => {
    expect(Math.abs(o.probProfit - (1 - jStat.lognormal.cdf(103.4, lmu, ls)))).toBeLessThan(1e-12);
    const atoms = r.curves.pnlDensity.atoms;
    expect(atoms).toHaveLength(2);
    expect(atoms[0].x).toBe(-340);
    expect(Math.abs(atoms[0].prob - pLoss)).toBeLessThan(1e-12);
    expect(atoms[1].x).toBe(660);
    expect(Math.abs(atoms[1].prob - pGain)).toBeLessThan(1e-12);
  });
});

describe('expected spot: E_view[S_h] = S e^{(μ−q)h} (lognormal mean; Merton 1976 compensation with jumps)', () => {
  for (const jumps of [undefined, { intensity: 2.5, mean: -0.07, sd: 0.15 }]) {
    it(`shares only${jumps ? ', with jumps' : ''}`, () => {
      const h = 0.6, mu = 0.09;
      const r = runCheck({ ...check([shares(250, 100)], h, { drift: mu, vol: 0.22 }), view: { drift: mu, vol: 0.22, jumps } });
      const want = 250 * (100 * Math.exp((mu - market.yield) * h) - 100);
      expect(Math.abs(r.outcome.expectedPnl - want)).toBeLessThan(1e-10 * 250 * 100);
      const wantRn = 250 * (100 * Math.exp((market.rate - market.yield) * h) - 100);
      expect(Math.abs(r.outcome.expectedPnlAtRate - wantRn)).toBeLessThan(1e-10 * 250 * 100);
      // shares: carry is the growth to the forward (dividends are not in the P&L)
      expect(Math.abs(r.outcome.attribution.entryVsFair + r.outcome.attribution.carry - wantRn)).toBeLessThan(1e-9);
      expect(r.legs[0].probItmView).toBe(1);
      expect(r.outcome.maxGain).toBeNull();
      expect(r.outcome.maxLoss).toBeCloseTo(-25000, 9);
    });
  }
  it('live option under a view drift: E_view[C(S_h, τ)] = e^{−rτ}·Black(F = S e^{(μ−q)h + (r−q)τ}, σ²T) (tower property)', () => {
    const S = 100, K = 108, T = 0.8, h = 0.3, tau = T - h, mu = 0.14, iv = 0.31, q = market.yield, r = market.rate;
    for (const kind of ['call', 'put'] as const) {
      const leg: LegInput = { qty: 3, kind, strike: K, years: T, iv, entry: 6 };
      const res = runCheck(check([leg], h, { drift: mu, vol: iv }));
      const F = S * Math.exp((mu - q) * h + (r - q) * tau);
      const sd = iv * Math.sqrt(T);
      const d1 = (Math.log(F / K) + 0.5 * sd * sd) / sd;
      const d2 = d1 - sd;
      const ev = Math.exp(-r * tau) * (kind === 'call' ? F * N(d1) - K * N(d2) : K * N(-d2) - F * N(-d1));
      expect(Math.abs(res.outcome.expectedPnl - 300 * (ev - 6))).toBeLessThan(1e-9 * 300 * S);
    }
  });
});

/** P(P&L ≤ y) by brute force: sign scan on a fine z grid, bisection of each crossing, jstat Φ. */
function bruteCdf(pnl: (S: number) => number, lmu: number, ls: number, y: number): number {
  const n = 20000;
  const z0 = -9, z1 = 9;
  const S = (z: number): number => Math.exp(lmu + ls * z);
  const inside = (z: number): boolean => pnl(S(z)) <= y;
  let total = 0;
  let start = inside(z0) ? -Infinity : NaN;
  let prevZ = z0;
  let prevIn = inside(z0);
  for (let i = 1; i <= n; i++) {
    const z = z0 + ((z1 - z0) * i) / n;
    const now = inside(z);
    if (now !== prevIn) {
      let a = prevZ, b = z;
      for (let k = 0; k < 60; k++) {
        const m = 0.5 * (a + b);
        if (inside(m) === prevIn) a = m;
        else b = m;
      }
      const root = 0.5 * (a + b);
      if (prevIn) total += N(root) - (start === -Infinity ? 0 : N(start));
      else start = root;
      prevIn = now;
    }
    prevZ = z;
  }
  if (prevIn) total += 1 - (start === -Infinity ? 0 : N(start));
  return total;
}

describe('before expiry: quantiles, breakevens and extremes against independent computations', () => {
  const input = check(
    [put(1, 88, 0.35, 0.31, 1.9), put(-2, 94, 0.25, 0.29, 2.6), call(-1, 106, 0.25, 0.26, 2.4), call(2, 112, 0.5, 0.25, 3.1)],
    0.12,
    { drift: 0.1, vol: 0.3 },
  );
  const r = runCheck(input);
  const pnl = pnlFn(input);
  const h = input.horizonYears;
  const lmu = Math.log(100) + (0.1 - market.yield - 0.5 * 0.09) * h;
  const ls = 0.3 * Math.sqrt(h);
  it('P(P&L ≤ q_p) = p at each reported quantile (brute-force cdf written here)', () => {
    const qs = r.outcome.pnlQuantiles;
    const ps: [number, number][] = [[0.05, qs.p05], [0.25, qs.p25], [0.5, qs.p50], [0.75, qs.p75], [0.95, qs.p95]];
    for (const [p, y] of ps) expect(Math.abs(bruteCdf(pnl, lmu, ls, y) - p)).toBeLessThan(1e-7);
    expect(Math.abs(1 - bruteCdf(pnl, lmu, ls, 0) - r.outcome.probProfit)).toBeLessThan(1e-9);
  });
  it('breakevens have P&L ≈ 0 and P&L changes sign across each', () => {
    expect(r.outcome.breakevens.length).toBeGreaterThan(0);
    for (const b of r.outcome.breakevens) {
      expect(Math.abs(pnl(b))).toBeLessThan(1e-8 * scaleOf(input));
      expect(pnl(b * (1 - 1e-4)) * pnl(b * (1 + 1e-4))).toBeLessThan(0);
    }
  });
  it('max gain is the sup of P&L over a fine spot grid (within rounding), loss unbounded only when calls dominate', () => {
    let best = -Infinity;
    for (let s = 1; s < 400; s += 0.01) best = Math.max(best, pnl(s));
    // net calls: +2 − 1 with the long ones living longer, so the P&L grows without bound
    expect(r.outcome.maxGain).toBeNull();
    expect(r.outcome.maxLoss).not.toBeNull();
    let worst = Infinity;
    for (let s = 0.5; s < 400; s += 0.01) worst = Math.min(worst, pnl(s));
    worst = Math.min(worst, pnl(1e-9));
    expect(r.outcome.maxLoss!).toBeLessThanOrEqual(worst + 1e-9);
    expect(r.outcome.maxLoss!).toBeGreaterThan(worst - 1e-6 * scaleOf(input));
    expect(best).toBeGreaterThan(r.outcome.pnlQuantiles.p95);
  });
  it('expected shortfall at 5% equals the mean of P&L below the 5% quantile (brute-force integral)', () => {
    const q = r.outcome.pnlQuantiles.p05;
    let t = 0;
    const n = 400000;
    const dz = 18 / n;
    for (let i = 0; i < n; i++) {
      const z = -9 + (i + 0.5) * dz;
      const v = pnl(Math.exp(lmu + ls * z));
      if (v < q) t += v * Math.exp(-0.5 * z * z) * dz;
    }
    t /= Math.sqrt(2 * Math.PI);
    expect(Math.abs(t / 0.05 - r.outcome.tailMean05)).toBeLessThan(1e-4 * scaleOf(input) * 0.01);
  });
});

describe('flat regions before expiry', () => {
  it('a flat valley of P&L: the quantiles still invert the brute-force cdf, and the worst-5% average lies above the minimum', () => {
    const m = { spot: 16.3, rate: 0.1176, yield: 0.0353 };
    const input: CheckInput = {
      market: m, mult: 100, style: 'european', horizonYears: 0.914, view: { drift: 0.1736, vol: 0.2218 },
      legs: [put(4, 23.66, 1.0614, 1.058), call(3, 15.29, 0.914, 0.5677, 0.926), shares(141, 20.9), shares(-194)],
    };
    const r = runCheck(input);
    const pnl = pnlFn(input);
    const h = input.horizonYears;
    const ls = 0.2218 * Math.sqrt(h);
    const lmu = Math.log(m.spot) + (0.1736 - m.yield - 0.5 * 0.2218 ** 2) * h;
    const qs = r.outcome.pnlQuantiles;
    for (const [p, y] of [[0.05, qs.p05], [0.25, qs.p25], [0.5, qs.p50]] as const) {
      expect(Math.abs(bruteCdf(pnl, lmu, ls, y) - p)).toBeLessThan(1e-7);
    }
    let worst = Infinity;
    for (let s = 5; s < 40; s += 0.001) worst = Math.min(worst, pnl(s));
    expect(r.outcome.maxLoss!).toBeCloseTo(worst, 4);
    expect(r.outcome.tailMean05).toBeGreaterThanOrEqual(r.outcome.maxLoss!);
    expect(r.outcome.tailMean05).toBeLessThanOrEqual(qs.p05);
  });
  it('a live call at zero iv is worth max(S e^{−qτ} − K e^{−rτ}, 0): P&L is flat at 0 below K e^{−(r−q)τ}, an atom with the lognormal probability there (jstat)', () => {
    const K = 110, T = 0.9, h = 0.4, tau = T - h, mu = 0.05, sv = 0.2;
    const r = runCheck(check([call(2, K, T, 0, 0)], h, { drift: mu, vol: sv }));
    const edge = K * Math.exp(-(market.rate - market.yield) * tau);
    expect(r.outcome.breakevens).toHaveLength(1);
    expect(Math.abs(r.outcome.breakevens[0] / edge - 1)).toBeLessThan(1e-12);
    const lmu = Math.log(100) + (mu - market.yield - 0.5 * sv * sv) * h;
    const pFlat = jStat.lognormal.cdf(edge, lmu, sv * Math.sqrt(h));
    const atom = r.curves.pnlDensity.atoms;
    expect(atom).toHaveLength(1);
    expect(Math.abs(atom[0].x)).toBeLessThan(1e-9);
    expect(Math.abs(atom[0].prob - pFlat)).toBeLessThan(1e-9);
    expect(Math.abs(r.outcome.probProfit - (1 - pFlat))).toBeLessThan(1e-9);
    expect(r.outcome.pnlQuantiles.p05).toBe(atom[0].x);
    expect(r.outcome.maxLoss).toBeCloseTo(0, 9);
  });
});

describe('payoff bounds of common positions (common practice)', () => {
  it('short put at expiry: gain capped at the premium, loss at strike − premium', () => {
    const r = runCheck(check([put(-1, 95, 0.2, 0.3, 2.5)], 0.2, { drift: 0.08, vol: 0.3 }));
    expect(r.outcome.maxGain).toBeCloseTo(250, 9);
    expect(r.outcome.maxLoss).toBeCloseTo(-(95 - 2.5) * 100, 9);
    expect(r.outcome.breakevens[0]).toBeCloseTo(92.5, 10);
  });
  it('covered call at expiry: gain capped at strike − entry + premium, loss at entry − premium', () => {
    const r = runCheck(check([shares(100, 98), call(-1, 105, 0.3, 0.25, 3)], 0.3, { drift: 0.08, vol: 0.25 }));
    expect(r.outcome.maxGain).toBeCloseTo(100 * (105 - 98 + 3), 9);
    expect(r.outcome.maxLoss).toBeCloseTo(-100 * (98 - 3), 9);
    expect(r.outcome.breakevens[0]).toBeCloseTo(95, 10);
  });
  it('long put before expiry: gain bounded by K e^{−rτ} − premium (European put bound, Hull), loss by the premium', () => {
    const K = 100, T = 0.5, h = 0.2, c = 5;
    const r = runCheck(check([put(1, K, T, 0.3, c)], h, { drift: 0.05, vol: 0.3 }));
    expect(r.outcome.maxGain).toBeCloseTo(100 * (K * Math.exp(-market.rate * (T - h)) - c), 7);
    expect(r.outcome.maxLoss).toBeCloseTo(-100 * c, 7);
  });
});

describe('edge cases never give NaN or Infinity', () => {
  it('horizon = today: the P&L is certain', () => {
    const input = check([call(1, 100, 0.5, 0.3, 7), put(-1, 95, 0.5, 0.3, 4)], 0, { drift: 0.1, vol: 0.3 });
    const r = runCheck(input);
    const want = pnlFn(input)(100);
    const q = r.outcome.pnlQuantiles;
    for (const v of [q.p05, q.p25, q.p50, q.p75, q.p95, r.outcome.expectedPnl, r.outcome.tailMean05]) expect(v).toBeCloseTo(want, 8);
    expect(r.outcome.probProfit).toBe(want > 0 ? 1 : 0);
    expect(allFinite(r)).toBe(true);
  });
  it('zero view vol and an empty position', () => {
    const r = runCheck(check([call(1, 100, 0.5, 0.3, 7)], 0.5, { drift: 0.1, vol: 0 }));
    const F = 100 * Math.exp((0.1 - market.yield) * 0.5);
    expect(r.outcome.expectedPnl).toBeCloseTo(100 * (Math.max(F - 100, 0) - 7), 8);
    expect(allFinite(r)).toBe(true);
    const e = runCheck(check([], 0.5, { drift: 0.1, vol: 0.2 }));
    expect(e.outcome.probProfit).toBe(0);
    expect(e.outcome.expectedPnl).toBe(0);
    expect(allFinite(e)).toBe(true);
  });
  it('random positions: finite figures, ordered quantiles, bounds respected, attribution adds up (fast-check)', () => {
    const legArb = fc.record({
      qty: fc.integer({ min: -5, max: 5 }).filter((x) => x !== 0),
      kind: fc.constantFrom('call', 'put', 'shares') as fc.Arbitrary<'call' | 'put' | 'shares'>,
      strike: fc.double({ min: 40, max: 200, noNaN: true }),
      extra: fc.double({ min: 0, max: 1, noNaN: true }),
      iv: fc.double({ min: 0.05, max: 1.2, noNaN: true }),
      entry: fc.option(fc.double({ min: 0, max: 40, noNaN: true })),
    });
    fc.assert(
      fc.property(
        fc.array(legArb, { minLength: 1, maxLength: 4 }),
        fc.double({ min: 0, max: 1.5, noNaN: true }),
        fc.double({ min: -0.5, max: 0.5, noNaN: true }),
        fc.double({ min: 0.02, max: 1.0, noNaN: true }),
        fc.boolean(),
        (ls, h, drift, vol, atExpiry) => {
          const legs: LegInput[] = ls.map((l, i) =>
            l.kind === 'shares'
              ? shares(l.qty * 50, l.entry)
              : { qty: l.qty, kind: l.kind, strike: l.strike, years: h + (atExpiry && i % 2 === 0 ? 0 : l.extra), iv: l.iv, entry: l.entry },
          );
          const input = check(legs, h, { drift, vol });
          const r = runCheck(input);
          const o = r.outcome;
          const sc = scaleOf(input);
          expect(allFinite(r)).toBe(true);
          expect(o.probProfit).toBeGreaterThanOrEqual(0);
          expect(o.probProfit).toBeLessThanOrEqual(1);
          const q = [o.pnlQuantiles.p05, o.pnlQuantiles.p25, o.pnlQuantiles.p50, o.pnlQuantiles.p75, o.pnlQuantiles.p95];
          for (let i = 1; i < 5; i++) expect(q[i]).toBeGreaterThanOrEqual(q[i - 1] - 1e-9 * sc);
          expect(o.tailMean05).toBeLessThanOrEqual(q[0] + 1e-9 * sc);
          if (o.maxLoss !== null) expect(o.maxLoss).toBeLessThanOrEqual(o.tailMean05 + 1e-7 * sc);
          if (o.maxGain !== null) expect(o.maxGain).toBeGreaterThanOrEqual(q[4] - 1e-7 * sc);
          const a = o.attribution;
          expect(Math.abs(a.entryVsFair + a.carry + a.earlyExercise + a.legIv + a.vol + a.drift - o.expectedPnl)).toBeLessThan(1e-9 * sc);
          const pnl = pnlFn(input);
          for (const b of o.breakevens) expect(Math.abs(pnl(b))).toBeLessThan(1e-7 * sc);
          for (let i = 1; i < o.breakevens.length; i++) expect(o.breakevens[i]).toBeGreaterThan(o.breakevens[i - 1]);
        },
      ),
      { numRuns: 60, seed: 20261201 },
    );
  });
});

describe('curves for the chart', () => {
  const input = check([put(1, 90, 0.3, 0.3, 2.1), call(-1, 110, 0.3, 0.27, 2.0), call(1, 120, 0.6, 0.26, 2.2)], 0.3, { drift: 0.12, vol: 0.33 });
  const r = runCheck(input);
  const c = r.curves;
  const h = 0.3;
  const vm = Math.log(100) + (0.12 - market.yield - 0.5 * 0.33 ** 2) * h;
  // the market walk: drift = rate, vol = the iv of the leg nearest the money (110: |ln 1.1| < |ln 0.9|)
  const rm = Math.log(100) + (market.rate - market.yield - 0.5 * 0.27 ** 2) * h;
  const s = 0.33 * Math.sqrt(h);
  const sm = 0.27 * Math.sqrt(h);
  it('spot points ascend and cover the 0.5%–99.5% quantiles of both densities, the strikes and breakevens (jstat)', () => {
    expect(c.spot.length).toBeGreaterThanOrEqual(195);
    expect(c.spot.length).toBeLessThanOrEqual(210);
    for (let i = 1; i < c.spot.length; i++) expect(c.spot[i]).toBeGreaterThan(c.spot[i - 1]);
    const lo = Math.min(jStat.lognormal.inv(0.005, vm, s), jStat.lognormal.inv(0.005, rm, sm));
    const hi = Math.max(jStat.lognormal.inv(0.995, vm, s), jStat.lognormal.inv(0.995, rm, sm));
    expect(c.spot[0]).toBeLessThan(lo);
    expect(c.spot[c.spot.length - 1]).toBeGreaterThan(hi);
    for (const k of [90, 110, 120, ...r.outcome.breakevens]) expect(c.spot).toContain(k);
  });
  it('densities are the lognormal pdfs (jstat) and P&L is the horizon P&L', () => {
    const pnl = pnlFn(input);
    c.spot.forEach((x, i) => {
      expect(Math.abs(c.densityView[i] - jStat.lognormal.pdf(x, vm, s))).toBeLessThan(1e-12);
      expect(Math.abs(c.densityMarket[i] - jStat.lognormal.pdf(x, rm, sm))).toBeLessThan(1e-12);
      expect(Math.abs(c.pnl[i] - pnl(x))).toBeLessThan(1e-9 * scaleOf(input));
    });
  });
  it('the P&L histogram over [q0.5%, q99.5%] carries 99% of the probability', () => {
    const d = c.pnlDensity;
    expect(d.x.length).toBe(120);
    const w = d.x[1] - d.x[0];
    const mass = d.density.reduce((t, v) => t + v * w, 0) + d.atoms.reduce((t, a) => t + a.prob, 0);
    expect(Math.abs(mass - 0.99)).toBeLessThan(1e-4);
  });
});
