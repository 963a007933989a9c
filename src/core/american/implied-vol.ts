/** The implied volatility of an American option (Brent on σ over the backward solves). */
import { badIvInputs, type IvResult } from '../iv.js';
import { validJumps } from '../jumps.js';
import { brentRoot } from '../numeric/root.js';
import type { IvInputs, Jumps } from '../types.js';
import { sizeFor } from './at-spot.js';
import { payoff } from './problem.js';
import { americanFdValue } from './value.js';

/**
 * The volatility at which the American value equals `price`. Fails (with the bound) when the
 * price is at or below intrinsic value (the American lower bound) or at or above the upper bound
 * (S for a call, K for a put). Brent's method on σ ∈ [0.0005, 5]. With `jumps`, the diffusion's
 * volatility under Merton jumps.
 */
export function americanImpliedVol(o: IvInputs, price: number, jumps?: Jumps): IvResult {
  const bad = badIvInputs(o, price, true, !jumps || validJumps(jumps));
  if (bad) return bad;
  const { kind, S, K, T, r, q } = o;
  const intrinsic = payoff(kind, S, K);
  const lower = Math.max(intrinsic, kind === 'call' ? S * Math.exp(-q * T) - K * Math.exp(-r * T) : K * Math.exp(-r * T) - S * Math.exp(-q * T), 0);
  const upper = kind === 'call' ? S : K;
  const size = sizeFor('normal');
  if (T === 0 || price <= lower + 1e-9 * Math.max(1, K)) {
    return {
      ok: false,
      message: `price ${price} is not above the American lower bound ${round6(lower)} (no time value), so no volatility fits`,
      bound: 'lower',
      boundValue: lower,
    };
  }
  if (price >= upper) {
    return { ok: false, message: `price ${price} is at or above the upper bound ${round6(upper)} (${kind === 'call' ? 'the spot' : 'the strike'})`, bound: 'upper', boundValue: upper };
  }
  const sMin = 0.0005;
  const sMax = 5;
  const at = { kind, S, K, T, r, q, sigma: sMin };
  const f = (s: number): number => {
    at.sigma = s;
    return americanFdValue(at, size, { jumps }) - price;
  };
  const a = sMin;
  const b = sMax;
  const fa = f(a);
  const fb = f(b);
  if (fa >= 0) {
    return { ok: false, message: `price ${price} is below the value at ${sMin * 100}% volatility (${round6(fa + price)})`, bound: 'lower', boundValue: fa + price };
  }
  if (fb <= 0) {
    return { ok: false, message: `price ${price} is above the value at ${sMax * 100}% volatility (${round6(fb + price)})`, bound: 'upper', boundValue: fb + price };
  }
  const iv = brentRoot(f, a, b, fa, fb, 2e-9);
  const h = Math.min(0.005, 0.5 * iv);
  const vega = ((f(iv + h) - f(iv - h)) / (2 * h)) * 0.01;
  return { ok: true, iv, vega };
}

function round6(v: number): number {
  return Math.round(v * 1e6) / 1e6;
}
