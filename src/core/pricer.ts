/**
 * The leg valuation seam: today's per-share value and Greeks of a leg, and its per-share value at
 * the horizon as a function of the spot then. The outcome engine (outcome.ts) only talks to these
 * functions, so every model plugs in here:
 * - European, no jumps: Black-Scholes-Merton closed forms (bsm.ts);
 * - European with jumps: Merton's Poisson-weighted series (merton.ts);
 * - American: finite differences (BDF2) on the backward equation (american.ts), with jumps the backward
 *   equation gains Merton's jump integral (a PIDE); the horizon valuer is ONE backward solve per
 *   leg, interpolated across spots.
 */
import { americanGreeks, americanValueCurve } from './american.js';
import { bsmAcross, bsmAcrossValue, bsmGreeks, type BsmAcross } from './bsm.js';
import { mertonGreeks, mertonValue } from './merton.js';
import type { ExerciseStyle, Greeks, Jumps, LegInput, Market, OptionInputs } from './types.js';
import { activeJumps } from './jumps.js';

export interface LegModel {
  market: Market;
  style: ExerciseStyle;
  jumps?: Jumps;
}

/** Remaining life (years) below which a leg counts as expiring at the horizon. */
export const EXPIRY_EPS = 1e-9;

function jumpsOf(m: LegModel): Jumps | undefined {
  return activeJumps(m.jumps);
}

/** Today's per-share value and Greeks (shares: value = spot, delta 1, the rest 0). */
export function legGreeks(leg: LegInput, m: LegModel): Greeks {
  const { spot, rate, yield: q } = m.market;
  if (leg.kind === 'shares') return { value: spot, delta: 1, gamma: 0, vega: 0, theta: 0, rho: 0 };
  const j = jumpsOf(m);
  const o: OptionInputs = { kind: leg.kind, S: spot, K: leg.strike, T: leg.years, r: rate, q, sigma: leg.iv };
  if (m.style === 'american') return americanGreeks(o, j ? { jumps: j } : {});
  if (j) return mertonGreeks(o, j);
  return bsmGreeks(o);
}

/** True when the option leg expires at (or before) the horizon. Shares never expire. */
export function expiresBy(leg: LegInput, horizonYears: number): boolean {
  return leg.kind !== 'shares' && leg.years - horizonYears <= EXPIRY_EPS;
}

/**
 * Per-share value of the leg at the horizon as a function of the spot then: intrinsic value for a
 * leg expiring at the horizon; otherwise the same model with the leg's own iv and the remaining
 * life (sticky strike); shares: the spot. Defined for every spot ≥ 0 (at 0, the S → 0 limit).
 * Built once per leg per check.
 */
export function legValuer(leg: LegInput, m: LegModel, horizonYears: number): (spotAtHorizon: number) => number {
  if (leg.kind === 'shares') return (s) => s;
  const K = leg.strike;
  if (expiresBy(leg, horizonYears)) {
    return leg.kind === 'call' ? (s) => (s > K ? s - K : 0) : (s) => (s < K ? K - s : 0);
  }
  const tau = leg.years - horizonYears;
  const { rate, yield: q } = m.market;
  const kind = leg.kind;
  const iv = leg.iv;
  if (m.style === 'american') {
    // one backward solve over a wide band of spots; outside it the curve's own asymptotes
    const w = 1 + 10 * Math.max(iv, 0.2) * Math.sqrt(horizonYears + tau);
    const spot = m.market.spot;
    return americanValueCurve({ kind, K, T: tau, r: rate, q, sigma: iv }, Math.min(spot, K) * Math.exp(-w), Math.max(spot, K) * Math.exp(w), jumpsOf(m));
  }
  const atZero = kind === 'call' ? 0 : K * Math.exp(-rate * tau);
  const j = jumpsOf(m);
  if (j) {
    // one record for every spot (mertonValue keeps no reference to it): only S changes
    const o: OptionInputs = { kind, S: m.market.spot, K, T: tau, r: rate, q, sigma: iv };
    return (s) => {
      if (!(s > 0)) return atZero;
      o.S = s;
      return mertonValue(o, j);
    };
  }
  const c = bsmAcross({ kind, K, T: tau, r: rate, q, sigma: iv });
  return (s) => (s > 0 ? bsmAcrossValue(c, Math.log(s), s) : atZero);
}

/**
 * The horizon value of a live leg in the form the outcome engine evaluates fastest, where the
 * model has one: Black-Scholes-Merton without jumps, its constants taken once (bsmAcross; the
 * value at a spot is bsmAcrossValue, equal to legValuer's). Null otherwise.
 */
export function legAcross(leg: LegInput, m: LegModel, horizonYears: number): BsmAcross | null {
  if (leg.kind === 'shares' || expiresBy(leg, horizonYears) || m.style === 'american' || jumpsOf(m)) return null;
  const { rate, yield: q } = m.market;
  return bsmAcross({ kind: leg.kind, K: leg.strike, T: leg.years - horizonYears, r: rate, q, sigma: leg.iv });
}

/**
 * Behaviour of the horizon value for a very large spot: V(S) ≈ intercept + slope·S, so that the
 * outcome engine can tell bounded from unbounded P&L and take limits exactly.
 */
export function legAsymptote(leg: LegInput, m: LegModel, horizonYears: number): { slope: number; intercept: number } {
  if (leg.kind === 'shares') return { slope: 1, intercept: 0 };
  if (leg.kind === 'put') return { slope: 0, intercept: 0 };
  if (expiresBy(leg, horizonYears)) return { slope: 1, intercept: -leg.strike };
  const tau = leg.years - horizonYears;
  // an American call deep in the money is exercised when the stock pays a yield: S − K
  if (m.style === 'american' && m.market.yield > 0) return { slope: 1, intercept: -leg.strike };
  return { slope: Math.exp(-m.market.yield * tau), intercept: -leg.strike * Math.exp(-m.market.rate * tau) };
}
