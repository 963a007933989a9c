/**
 * Closed-form curves for chart tests, computed here independently of the engine:
 * the lognormal density of the spot at a horizon under geometric Brownian motion
 * (Hull, Options, Futures and Other Derivatives, ch. 15 "The Black-Scholes-Merton model",
 * lognormal property: ln S_T ~ N(ln S_0 + (μ − q − σ²/2)T, σ²T)), and P&L at expiry of
 * simple positions from their payoffs (intrinsic values minus premium paid).
 */
import type { Curves } from '../../src/core/types.js';

/** Φ⁻¹(0.995), standard normal tables (e.g. Abramowitz & Stegun, Table 26.5): 2.5758293 */
export const Z995 = 2.5758293035489;

export function lognormalPdf(s: number, s0: number, mu: number, q: number, sigma: number, t: number): number {
  if (s <= 0) return 0;
  const m = Math.log(s0) + (mu - q - 0.5 * sigma * sigma) * t;
  const v = sigma * Math.sqrt(t);
  const z = (Math.log(s) - m) / v;
  return Math.exp(-0.5 * z * z) / (s * v * Math.sqrt(2 * Math.PI));
}

export function lognormalQuantile(z: number, s0: number, mu: number, q: number, sigma: number, t: number): number {
  const m = Math.log(s0) + (mu - q - 0.5 * sigma * sigma) * t;
  return Math.exp(m + z * sigma * Math.sqrt(t));
}

export interface Gbm {
  s0: number;
  mu: number;
  r: number;
  q: number;
  sigma: number;
  t: number;
}

/** A uniform spot grid holding ±6 s.d. of both walks, with both densities and a P&L function. */
export function closedFormCurves(g: Gbm, pnl: (s: number) => number, n = 801): Curves {
  const lo = Math.min(lognormalQuantile(-6, g.s0, g.mu, g.q, g.sigma, g.t), lognormalQuantile(-6, g.s0, g.r, g.q, g.sigma, g.t));
  const hi = Math.max(lognormalQuantile(6, g.s0, g.mu, g.q, g.sigma, g.t), lognormalQuantile(6, g.s0, g.r, g.q, g.sigma, g.t));
  const spot: number[] = [];
  for (let i = 0; i < n; i++) spot.push(lo + ((hi - lo) * i) / (n - 1));
  return {
    spot,
    densityView: spot.map((s) => lognormalPdf(s, g.s0, g.mu, g.q, g.sigma, g.t)),
    densityMarket: spot.map((s) => lognormalPdf(s, g.s0, g.r, g.q, g.sigma, g.t)),
    pnl: spot.map(pnl),
    pnlDensity: { x: [], density: [], atoms: [] },
  };
}

const call = (s: number, k: number) => Math.max(s - k, 0);
const put = (s: number, k: number) => Math.max(k - s, 0);

/** +2 call 105 @3.10, −2 call 115 @1.05, multiplier 100, at expiry. Breakeven 105 + 2.05 = 107.05. */
export const callSpread = {
  strikes: [105, 115],
  breakevens: [107.05],
  pnl: (s: number) => 200 * (call(s, 105) - call(s, 115)) - 200 * (3.1 - 1.05),
};

/** −1 call 100 @5.00, −1 put 100 @4.80, multiplier 100, at expiry. Breakevens 100 ± 9.80. */
export const shortStraddle = {
  strikes: [100],
  breakevens: [90.2, 109.8],
  pnl: (s: number) => 100 * (9.8 - call(s, 100) - put(s, 100)),
};

/** +100 shares bought at 100, −1 call 110 @2.00 (multiplier 100). Breakeven 98. */
export const coveredStock = {
  strikes: [110],
  breakevens: [98],
  pnl: (s: number) => 100 * (s - 100) - 100 * call(s, 110) + 200,
};

/** Every number inside a value (deep), for "no NaN or Infinity reaches output" checks. */
export function allNumbers(v: unknown, out: number[] = []): number[] {
  if (typeof v === 'number') out.push(v);
  else if (Array.isArray(v)) for (const x of v) allNumbers(x, out);
  else if (v && typeof v === 'object') for (const x of Object.values(v)) allNumbers(x, out);
  return out;
}
