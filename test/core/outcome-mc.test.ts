/**
 * The outcome engine against a seeded Monte Carlo written here (mulberry32 uniforms, Box-Muller
 * normals, Knuth's Poisson sampler for jump counts): every figure within 4 standard errors.
 * The P&L is written independently of the engine (intrinsic at expiry, Black-Scholes-Merton from
 * bsm.ts for live legs). Standard errors: binomial for probabilities and quantile levels, the
 * sample standard deviation for means, and the usual asymptotic variance of the expected-shortfall
 * estimator, [Var(X | X ≤ q) + (1 − α)(q − ES)²]/(Nα) (common practice).
 */
import { describe, expect, it } from 'vitest';
import { runCheck } from '../../src/core/outcome.js';
import type { CheckInput, Jumps, LegInput } from '../../src/core/types.js';
import { mulberry32, normals } from '../support/rng.js';
import { pnlFn } from '../support/positions.js';


/** Spot at the horizon: lognormal, plus compensated Merton jumps when given. */
function simulateSpots(spot: number, h: number, q: number, drift: number, vol: number, seed: number, n: number, jumps?: Jumps): Float64Array {
  const z = normals(seed, n);
  const out = new Float64Array(n);
  const u = mulberry32(seed ^ 0x9e3779b9);
  const zj = normals(seed + 1, n * 4);
  let k = 0;
  const lh = jumps ? jumps.intensity * h : 0;
  const kappa = jumps ? Math.exp(jumps.mean + 0.5 * jumps.sd * jumps.sd) - 1 : 0;
  const base = Math.log(spot) + (drift - q - (jumps ? jumps.intensity * kappa : 0) - 0.5 * vol * vol) * h;
  for (let i = 0; i < n; i++) {
    let x = base + vol * Math.sqrt(h) * z[i];
    if (jumps && lh > 0) {
      // Knuth: count uniforms until their product drops below e^{−λh}
      const L = Math.exp(-lh);
      let p = u();
      let count = 0;
      while (p > L) {
        count++;
        p *= u();
      }
      for (let c = 0; c < count; c++) x += jumps.mean + jumps.sd * zj[k++ % zj.length];
    }
    out[i] = Math.exp(x);
  }
  return out;
}

interface Stats {
  probProfit: number;
  mean: number;
  sd: number;
  sorted: Float64Array;
}

function stats(pnl: (S: number) => number, spots: Float64Array): Stats {
  const n = spots.length;
  const v = new Float64Array(n);
  let win = 0;
  let s1 = 0;
  for (let i = 0; i < n; i++) {
    v[i] = pnl(spots[i]);
    if (v[i] > 0) win++;
    s1 += v[i];
  }
  const mean = s1 / n;
  let s2 = 0;
  for (let i = 0; i < n; i++) s2 += (v[i] - mean) ** 2;
  v.sort();
  return { probProfit: win / n, mean, sd: Math.sqrt(s2 / (n - 1)), sorted: v };
}

function fractionBelow(sorted: Float64Array, y: number, strict: boolean): number {
  let lo = 0;
  let hi = sorted.length;
  while (lo < hi) {
    const mid = (lo + hi) >> 1;
    if (strict ? sorted[mid] < y : sorted[mid] <= y) lo = mid + 1;
    else hi = mid;
  }
  return lo / sorted.length;
}

function compare(input: CheckInput, n: number, seed: number): void {
  const { spot, rate, yield: q } = input.market;
  const h = input.horizonYears;
  const { drift, vol, jumps } = input.view;
  const pnl = pnlFn(input);
  const r = runCheck(input).outcome;
  const view = stats(pnl, simulateSpots(spot, h, q, drift, vol, seed, n, jumps));
  const rn = stats(pnl, simulateSpots(spot, h, q, rate, vol, seed + 17, n, jumps));
  const se = (p: number): number => Math.sqrt(Math.max(p * (1 - p), 1 / n) / n);

  expect(Math.abs(r.probProfit - view.probProfit)).toBeLessThan(4 * se(r.probProfit));
  expect(Math.abs(r.expectedPnl - view.mean)).toBeLessThan((4 * view.sd) / Math.sqrt(n));
  expect(Math.abs(r.expectedPnlAtRate - rn.mean)).toBeLessThan((4 * rn.sd) / Math.sqrt(n));

  const qs = r.pnlQuantiles;
  for (const [p, y] of [[0.05, qs.p05], [0.25, qs.p25], [0.5, qs.p50], [0.75, qs.p75], [0.95, qs.p95]] as const) {
    // lower quantile: P(X ≤ y) ≥ p and P(X < y) ≤ p, each within sampling error
    expect(fractionBelow(view.sorted, y, false)).toBeGreaterThan(p - 4 * se(p));
    expect(fractionBelow(view.sorted, y, true)).toBeLessThan(p + 4 * se(p));
  }

  // expected shortfall at 5%: mean of the worst ⌈αN⌉ samples
  const alpha = 0.05;
  const m = Math.ceil(alpha * n);
  let t1 = 0;
  for (let i = 0; i < m; i++) t1 += view.sorted[i];
  const es = t1 / m;
  let t2 = 0;
  for (let i = 0; i < m; i++) t2 += (view.sorted[i] - es) ** 2;
  const qn = view.sorted[m - 1];
  const esSe = Math.sqrt((t2 / m + (1 - alpha) * (qn - es) ** 2) / (n * alpha));
  expect(Math.abs(r.tailMean05 - es)).toBeLessThan(4 * esSe + 1e-9);
}

const market = { spot: 84.2, rate: 0.045, yield: 0.012 };
const leg = (qty: number, kind: 'call' | 'put', strike: number, days: number, iv: number, entry: number): LegInput => ({
  qty, kind, strike, years: days / 365, iv, entry,
});

describe('outcome figures agree with a seeded Monte Carlo within 4 standard errors', () => {
  it('four legs before expiry (staggered expiries, sticky-strike revaluation)', () => {
    const input: CheckInput = {
      market, mult: 100, style: 'european', horizonYears: 30 / 365, view: { drift: 0.12, vol: 0.32 },
      legs: [leg(1, 'put', 75, 60, 0.33, 1.1), leg(-2, 'put', 80, 60, 0.31, 2.2), leg(-1, 'call', 90, 90, 0.28, 2.3), leg(2, 'call', 95, 120, 0.27, 1.9)],
    };
    compare(input, 200000, 12345);
  });
  it('two legs expiring at the horizon and two living on', () => {
    const input: CheckInput = {
      market, mult: 100, style: 'european', horizonYears: 45 / 365, view: { drift: -0.05, vol: 0.4 },
      legs: [leg(-1, 'put', 78, 45, 0.33, 1.6), leg(1, 'put', 76, 120, 0.31, 3.4), leg(-1, 'call', 92, 45, 0.28, 1.1), leg(1, 'call', 92, 120, 0.27, 4.0)],
    };
    compare(input, 200000, 777);
  });
  it('iron condor at expiry (atoms at both ends)', () => {
    const input: CheckInput = {
      market, mult: 100, style: 'european', horizonYears: 45 / 365, view: { drift: 0.1, vol: 0.3 },
      legs: [leg(1, 'put', 72, 45, 0.34, 0.55), leg(-1, 'put', 78, 45, 0.31, 1.4), leg(-1, 'call', 90, 45, 0.28, 1.25), leg(1, 'call', 96, 45, 0.27, 0.45)],
    };
    compare(input, 200000, 4242);
  });
  it('shares under Merton jumps (Poisson mixture of lognormals)', () => {
    const input: CheckInput = {
      market, mult: 100, style: 'european', horizonYears: 0.5,
      view: { drift: 0.08, vol: 0.18, jumps: { intensity: 3, mean: -0.06, sd: 0.1 } },
      legs: [{ qty: 300, kind: 'shares', strike: 0, years: 0, iv: 0, entry: 83 }],
    };
    compare(input, 200000, 99);
  });
});
