/**
 * The leg valuation seam: today's per-share value and Greeks of a leg, and its per-share value at
 * the horizon as a function of the spot then. The outcome engine (outcome.ts) only talks to these
 * three functions, so other models (early exercise, jumps) plug in here.
 *
 * Today: European Black-Scholes-Merton (bsm.ts). American exercise and Merton jumps throw a clear
 * error until their solvers are wired in. Wiring notes:
 * - jumps (European): legGreeks → mertonGreeks, legValuer → mertonValue with τ; the S → 0 value
 *   and legAsymptote are unchanged (the compensated forward is the same);
 * - American: legValuer should do one backward solve per leg and return an interpolant; its S → 0
 *   value is K for a put (immediate exercise), and legAsymptote for a call is slope 1, intercept
 *   −K when q > 0 (exercised), as today when q = 0.
 */
import { bsmGreeks, bsmValue } from './bsm.js';
import type { ExerciseStyle, Greeks, Jumps, LegInput, Market } from './types.js';

export interface LegModel {
  market: Market;
  style: ExerciseStyle;
  jumps?: Jumps;
}

/** Remaining life (years) below which a leg counts as expiring at the horizon. */
export const EXPIRY_EPS = 1e-9;

function assertAvailable(leg: LegInput, m: LegModel): void {
  if (leg.kind === 'shares') return;
  if (m.style === 'american') {
    throw new Error('American exercise is not available yet in the pricer (european only for now)');
  }
  if (m.jumps && m.jumps.intensity > 0) {
    throw new Error('Merton jumps are not available yet in the pricer (no-jump Black-Scholes-Merton only for now)');
  }
}

/** Today's per-share value and Greeks (shares: value = spot, delta 1, the rest 0). */
export function legGreeks(leg: LegInput, m: LegModel): Greeks {
  const { spot, rate, yield: q } = m.market;
  if (leg.kind === 'shares') return { value: spot, delta: 1, gamma: 0, vega: 0, theta: 0, rho: 0 };
  assertAvailable(leg, m);
  return bsmGreeks(leg.kind, spot, leg.strike, leg.years, rate, q, leg.iv);
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
  assertAvailable(leg, m);
  const tau = leg.years - horizonYears;
  const { rate, yield: q } = m.market;
  const kind = leg.kind;
  const iv = leg.iv;
  const atZero = kind === 'call' ? 0 : K * Math.exp(-rate * tau);
  return (s) => (s > 0 ? bsmValue(kind, s, K, tau, rate, q, iv) : atZero);
}

/**
 * Behaviour of the horizon value for a very large spot: V(S) ≈ intercept + slope·S, so that the
 * outcome engine can tell bounded from unbounded P&L and take limits exactly.
 */
export function legAsymptote(leg: LegInput, m: LegModel, horizonYears: number): { slope: number; intercept: number } {
  if (leg.kind === 'shares') return { slope: 1, intercept: 0 };
  if (leg.kind === 'put') return { slope: 0, intercept: 0 };
  if (expiresBy(leg, horizonYears)) return { slope: 1, intercept: -leg.strike };
  assertAvailable(leg, m);
  const tau = leg.years - horizonYears;
  return { slope: Math.exp(-m.market.yield * tau), intercept: -leg.strike * Math.exp(-m.market.rate * tau) };
}
