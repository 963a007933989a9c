/**
 * Black-Scholes-Merton for European options on a stock with a continuous dividend yield q
 * (Merton 1973): value, Greeks and the probability of finishing in the money.
 *
 *   d1 = (ln(S/K) + (r − q + σ²/2)T) / (σ√T),  d2 = d1 − σ√T
 *   call = S e^{−qT} Φ(d1) − K e^{−rT} Φ(d2),  put = K e^{−rT} Φ(−d2) − S e^{−qT} Φ(−d1)
 *
 * Units (docs/design.md §3): value per share; delta and gamma per 1.00 of spot; vega per vol point
 * (∂V/∂σ × 0.01); theta per calendar day (∂V/∂t = −∂V/∂T, divided by 365); rho per 1% of rate
 * (∂V/∂r × 0.01).
 *
 * Speed: one log, one sqrt, the two discount exponentials and one exponential for φ(d1);
 * φ(d2) follows from the identity K e^{−rT} φ(d2) = S e^{−qT} φ(d1), and Φ(d1), Φ(d2) reuse
 * the densities (normCdfWithPdf), so no further exponential is taken.
 *
 * Limits (never NaN or Infinity for finite inputs with S, K > 0, σ ≥ 0, T ≥ 0):
 * - T ≤ 0 (expired): value = intrinsic max(±(S − K), 0); delta is the step ±1 / 0, and ±½
 *   exactly at the money (the average of the one-sided limits); gamma, vega, theta, rho are 0
 *   (nothing is left to decay or to discount).
 * - σ√T = 0 with T > 0: the forward is certain; value = max(±(S e^{−qT} − K e^{−rT}), 0) and the
 *   Greeks are the σ → 0 limits (delta ±e^{−qT} or 0, gamma 0; at exactly the money-forward,
 *   delta ±½e^{−qT} and vega S e^{−qT}√T/√(2π), its limit).
 * - Extreme S/K: Φ saturates to 0 or 1 cleanly; the value is clamped at the no-arbitrage lower
 *   bound so rounding can never make it negative. Gamma is capped at Number.MAX_VALUE (reached
 *   only when S·σ√T is below about 1e−308).
 */
import type { Greeks, OptionInputs, OptionKind, OptionTerms } from './types.js';
import { normCdf, normCdfWithPdf, normPdf } from './normal.js';

// Local names for the Math builtins keep the hot functions' bytecode small enough for V8 to
// inline them into callers' loops (TurboFan still lowers them to the same machine code).
const { exp, log, sqrt, max } = Math;
const MAX_DOUBLE = Number.MAX_VALUE;
const INV_SQRT_2PI = 0.398942280401432677939946059934;
/** σ√T below this is treated as the certain-forward limit (d1 would overflow or be 0/0). */
const TINY_SD = 1e-15;

/** Value per share of a European call or put under Black-Scholes-Merton. */
export function bsmValue(o: OptionInputs): number {
  const { kind, S, K, T, r, q, sigma } = o;
  const w = kind === 'call' ? 1 : -1;
  if (!(T > 0)) return max(w * (S - K), 0);
  // the log does not wait for the discount exponentials (shorter dependency chain)
  const lnF = log(S / K) + (r - q) * T; // ln(S e^{−qT} / K e^{−rT})
  const sd = sigma * sqrt(T);
  const fS = S * exp(-q * T); // S e^{−qT}
  const fK = K * exp(-r * T); // K e^{−rT}
  const fwd = w * (fS - fK);
  if (!(sd > TINY_SD)) return max(fwd, 0);
  const d1 = lnF / sd + 0.5 * sd;
  const d2 = d1 - sd;
  const p1 = normPdf(d1);
  const p2 = pdfD2(p1, fS / fK, d2);
  // call: S e^{−qT} Φ(d1) − K e^{−rT} Φ(d2); put: the same with −d1, −d2, negated
  const v = w * (fS * normCdfWithPdf(w * d1, p1) - fK * normCdfWithPdf(w * d2, p2));
  return max(v, fwd, 0);
}

/** Value and Greeks per share (units in the module comment). */
export function bsmGreeks(o: OptionInputs): Greeks {
  const { kind, S, K, T, r, q, sigma } = o;
  const sqT = sqrt(T);
  const sd = sigma * sqT;
  // T ≤ 0 (sqT is 0 or NaN) and σ√T = 0 go out of line; both parts stay small enough for V8 to
  // inline into pricing loops (which then drops the returned object altogether)
  return sd > TINY_SD
    ? greeksCore(kind === 'call' ? 1 : -1, S, K, T, r, q, sigma, sqT, sd)
    : greeksLimit(kind, S, K, T, r, q);
}

/** The general case; w = +1 for a call, −1 for a put. */
function greeksCore(
  w: number,
  S: number,
  K: number,
  T: number,
  r: number,
  q: number,
  sigma: number,
  sqT: number,
  sd: number,
): Greeks {
  const dq = exp(-q * T);
  const dr = exp(-r * T);
  const fS = S * dq;
  const fK = K * dr;
  const d1 = (log(S / K) + (r - q) * T) / sd + 0.5 * sd;
  const p1 = normPdf(d1);
  // Φ(±d1), Φ(±d2) on the option's own side (+ call, − put)
  const n1 = normCdfWithPdf(w * d1, p1);
  const n2 = normCdfWithPdf(w * (d1 - sd), pdfD2(p1, fS / fK, d1 - sd));
  const a = fS * n1;
  const b = fK * n2;
  const fSp1 = fS * p1;
  const gamma = (dq * p1) / (S * sd);
  return {
    value: max(w * (a - b), w * (fS - fK), 0),
    delta: w * dq * n1,
    // true gamma can exceed the largest double only for absurd inputs (S·σ√T below ~1e−308)
    gamma: gamma <= MAX_DOUBLE ? gamma : MAX_DOUBLE,
    vega: fSp1 * sqT * 0.01,
    theta: ((-fSp1 * sigma) / (2 * sqT) + w * (q * a - r * b)) / 365,
    rho: w * K * T * dr * n2 * 0.01,
  };
}

/**
 * φ(d2) from φ(d1) by K e^{−rT} φ(d2) = S e^{−qT} φ(d1), i.e. φ(d2) = φ(d1)·ratio, falling back to
 * the direct density when φ(d1) underflowed or the ratio overflowed (extreme S/K only).
 */
function pdfD2(p1: number, ratio: number, d2: number): number {
  const p2 = p1 * ratio;
  return p1 !== 0 && p2 < Infinity ? p2 : normPdf(d2);
}

function expired(kind: OptionKind, S: number, K: number): Greeks {
  const sign = kind === 'call' ? 1 : -1;
  const m = sign * (S - K);
  return {
    value: Math.max(m, 0),
    delta: m > 0 ? sign : m < 0 ? 0 : 0.5 * sign,
    gamma: 0,
    vega: 0,
    theta: 0,
    rho: 0,
  };
}

/** T ≤ 0: expired; σ√T = 0 with T > 0: the σ → 0 limits of the formulas above. */
function greeksLimit(kind: OptionKind, S: number, K: number, T: number, r: number, q: number): Greeks {
  if (!(T > 0)) return expired(kind, S, K);
  const sqT = Math.sqrt(T);
  const dq = Math.exp(-q * T);
  const fS = S * dq;
  const fK = K * Math.exp(-r * T);
  const sign = kind === 'call' ? 1 : -1;
  const m = sign * (fS - fK);
  // Φ(±d1) and Φ(±d2) of the option's own side: 1 in the money, 0 out, ½ exactly at the money.
  const n = m > 0 ? 1 : m < 0 ? 0 : 0.5;
  const atTheMoney = m === 0;
  return {
    value: Math.max(m, 0),
    delta: sign * dq * n,
    gamma: 0,
    vega: atTheMoney ? fS * INV_SQRT_2PI * sqT * 0.01 : 0,
    theta: (sign * (q * fS - r * fK) * n) / 365,
    rho: sign * K * T * (fK / K) * n * 0.01,
  };
}

/**
 * Probability that the option finishes in the money (S_T > K for a call, S_T < K for a put)
 * when dS = (drift − q) S dt + σ S dW; drift = o.r (the default) gives the risk-neutral probability.
 * Limits: T ≤ 0 or σ√T = 0 compare the (certain) forward S e^{(drift−q)T} with K, strictly;
 * a forward exactly at the strike gives 0 (it finishes at the strike, not beyond it).
 */
export function probItm(o: OptionInputs, drift: number = o.r): number {
  const { kind, S, K, T, q, sigma } = o;
  const t = T > 0 ? T : 0;
  const sd = sigma * Math.sqrt(t);
  const m = Math.log(S / K) + (drift - q) * t; // ln(F/K)
  if (!(sd > TINY_SD)) {
    if (kind === 'call') return m > 0 ? 1 : 0;
    return m < 0 ? 1 : 0;
  }
  const d2 = m / sd - 0.5 * sd;
  return kind === 'call' ? normCdf(d2) : normCdf(-d2);
}

/**
 * One European option seen across spots, for the same strike, life, rate, yield and vol: the
 * constants (discount factors, σ√T, ln K) taken once, so that each spot costs one exponential
 * (φ(d1)) and the two Φ (bsmAcrossValue). T > 0.
 */
export interface BsmAcross {
  /** +1 call, −1 put */
  w: number;
  sd: number;
  dq: number;
  /** K e^{−rT} */
  fK: number;
  /** (r − q)T − ln K */
  shift: number;
}

export function bsmAcross(o: OptionTerms): BsmAcross {
  const { kind, K, T, r, q, sigma } = o;
  return { w: kind === 'call' ? 1 : -1, sd: sigma * sqrt(T), dq: exp(-q * T), fK: K * exp(-r * T), shift: (r - q) * T - log(K) };
}

/** Value at x = ln S (and S): the formula, limits and clamp of bsmValue. */
export function bsmAcrossValue(c: BsmAcross, x: number, S: number): number {
  const { w, sd, fK } = c;
  const fS = S * c.dq;
  const fwd = w * (fS - fK);
  if (!(sd > TINY_SD)) return max(fwd, 0);
  const d1 = (x + c.shift) / sd + 0.5 * sd;
  const d2 = d1 - sd;
  const p1 = normPdf(d1);
  const p2 = pdfD2(p1, fS / fK, d2);
  const v = w * (fS * normCdfWithPdf(w * d1, p1) - fK * normCdfWithPdf(w * d2, p2));
  return max(v, fwd, 0);
}
