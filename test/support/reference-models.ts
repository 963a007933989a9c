/**
 * Option values and walk expectations written here independently of the engine, for the tests that
 * recompute the outcome's columns and attribution (DESIGN.md §3–§4):
 * - Black-Scholes-Merton (Merton 1973; Hull, "Options, Futures, and Other Derivatives", ch. 15)
 *   with jstat's normal cdf (accurate away from the far tails, where these tests stay);
 * - Merton (1976) jump diffusion as the Poisson-weighted BSM series (Hull ch. 27);
 * - American values by a Cox-Ross-Rubinstein binomial tree (Cox, Ross & Rubinstein 1979), two
 *   step counts averaged to damp the odd/even oscillation;
 * - expectations over the spot at a horizon (a lognormal, or Merton's Poisson mixture of
 *   lognormals) by composite Gauss-Legendre in the normal variable (test/support/quadrature.ts),
 *   and the probability that a P&L is positive by locating its zero crossings on a fine grid.
 */
import { createRequire } from 'node:module';
import { integrate } from './quadrature.js';

const require = createRequire(import.meta.url);
const { jStat } = require('jstat') as { jStat: { normal: { cdf(x: number, m: number, s: number): number } } };
const N = (x: number): number => jStat.normal.cdf(x, 0, 1);

export type Kind = 'call' | 'put';

/** BSM value per share; T ≤ 0 gives intrinsic value. */
export function bs(kind: Kind, S: number, K: number, T: number, r: number, q: number, v: number): number {
  if (T <= 0) return kind === 'call' ? Math.max(S - K, 0) : Math.max(K - S, 0);
  if (S <= 0) return kind === 'call' ? 0 : K * Math.exp(-r * T);
  const sd = v * Math.sqrt(T);
  const d1 = (Math.log(S / K) + (r - q + 0.5 * v * v) * T) / sd;
  const d2 = d1 - sd;
  return kind === 'call'
    ? S * Math.exp(-q * T) * N(d1) - K * Math.exp(-r * T) * N(d2)
    : K * Math.exp(-r * T) * N(-d2) - S * Math.exp(-q * T) * N(-d1);
}

export interface JumpTerms {
  intensity: number;
  mean: number;
  sd: number;
}

/** Merton (1976) value: Σ_n e^{−λ'T}(λ'T)ⁿ/n! · BSM(S, K, T, r_n, q, σ_n), λ' = λ(1+κ). */
export function merton(kind: Kind, S: number, K: number, T: number, r: number, q: number, v: number, j: JumpTerms): number {
  if (T <= 0) return bs(kind, S, K, T, r, q, v);
  const kappa = Math.exp(j.mean + 0.5 * j.sd * j.sd) - 1;
  const lp = j.intensity * (1 + kappa) * T;
  let total = 0;
  let w = Math.exp(-lp);
  for (let n = 0; n < 200; n++) {
    if (n > 0) w *= lp / n;
    const vn = Math.sqrt(v * v + (n * j.sd * j.sd) / T);
    const rn = r - j.intensity * kappa + (n * Math.log(1 + kappa)) / T;
    total += w * bs(kind, S, K, T, rn, q, vn);
    if (n > lp && w < 1e-18) break;
  }
  return total;
}

/** American value by a CRR tree, the average of n and n+1 steps. */
export function americanTree(kind: Kind, S: number, K: number, T: number, r: number, q: number, v: number, n = 4000): number {
  const one = (m: number): number => {
    const dt = T / m;
    const u = Math.exp(v * Math.sqrt(dt));
    const d = 1 / u;
    const p = (Math.exp((r - q) * dt) - d) / (u - d);
    const disc = Math.exp(-r * dt);
    const vals = new Float64Array(m + 1);
    for (let i = 0; i <= m; i++) {
      const s = S * Math.pow(u, m - 2 * i);
      vals[i] = kind === 'call' ? Math.max(s - K, 0) : Math.max(K - s, 0);
    }
    for (let k = m - 1; k >= 0; k--) {
      for (let i = 0; i <= k; i++) {
        const s = S * Math.pow(u, k - 2 * i);
        const hold = disc * (p * vals[i] + (1 - p) * vals[i + 1]);
        const ex = kind === 'call' ? s - K : K - s;
        vals[i] = Math.max(hold, ex);
      }
    }
    return vals[0];
  };
  return 0.5 * (one(n) + one(n + 1));
}

/** A walk of the spot to a horizon: drift = expected total return, vol, optional jumps. */
export interface RefWalk {
  drift: number;
  vol: number;
  jumps?: JumpTerms;
}

/** The law of ln S_h as (weight, mean, s.d.) components (one without jumps). */
export function components(S: number, h: number, q: number, w: RefWalk): { weight: number; mu: number; s: number }[] {
  const j = w.jumps;
  if (!j || j.intensity === 0) return [{ weight: 1, mu: Math.log(S) + (w.drift - q - 0.5 * w.vol * w.vol) * h, s: w.vol * Math.sqrt(h) }];
  const kappa = Math.exp(j.mean + 0.5 * j.sd * j.sd) - 1;
  const lh = j.intensity * h;
  const out: { weight: number; mu: number; s: number }[] = [];
  let p = Math.exp(-lh);
  for (let n = 0; n < 200; n++) {
    if (n > 0) p *= lh / n;
    out.push({
      weight: p,
      mu: Math.log(S) + (w.drift - q - j.intensity * kappa - 0.5 * w.vol * w.vol) * h + n * j.mean,
      s: Math.sqrt(w.vol * w.vol * h + n * j.sd * j.sd),
    });
    if (n > lh && p < 1e-18) break;
  }
  return out;
}

const Z = 10;

/** E[g(S_h)] under the walk, by Gauss-Legendre in the normal variable of each component. */
export function expectation(g: (s: number) => number, S: number, h: number, q: number, w: RefWalk, panels = 200): number {
  let total = 0;
  for (const c of components(S, h, q, w)) {
    const phi = (z: number) => Math.exp(-0.5 * z * z) / Math.sqrt(2 * Math.PI);
    total += c.weight * integrate((z) => g(Math.exp(c.mu + c.s * z)) * phi(z), -Z, Z, panels);
  }
  return total;
}

/** P(g(S_h) > 0) under the walk: zero crossings of g located on a fine log grid, then bisection. */
export function probPositive(g: (s: number) => number, S: number, h: number, q: number, w: RefWalk): number {
  const comps = components(S, h, q, w);
  let lo = Infinity;
  let hi = -Infinity;
  for (const c of comps) {
    if (c.weight < 1e-14) continue;
    lo = Math.min(lo, c.mu - Z * c.s);
    hi = Math.max(hi, c.mu + Z * c.s);
  }
  const n = 20000;
  const xs: number[] = [];
  for (let i = 0; i <= n; i++) xs.push(lo + ((hi - lo) * i) / n);
  const cdfAt = (x: number): number => comps.reduce((t, c) => t + c.weight * N((x - c.mu) / c.s), 0);
  const f = (x: number) => g(Math.exp(x));
  let prob = 0;
  let start: number | null = f(xs[0]) > 0 ? -Infinity : null;
  for (let i = 1; i <= n; i++) {
    const a = f(xs[i - 1]) > 0;
    const b = f(xs[i]) > 0;
    if (a === b) continue;
    let u = xs[i - 1];
    let v = xs[i];
    for (let k = 0; k < 80; k++) {
      const m = 0.5 * (u + v);
      if (f(m) > 0 === a) u = m;
      else v = m;
    }
    const x = 0.5 * (u + v);
    if (b) start = x;
    else {
      prob += cdfAt(x) - (start === -Infinity || start === null ? 0 : cdfAt(start));
      start = null;
    }
  }
  if (start !== null) prob += 1 - (start === -Infinity ? 0 : cdfAt(start));
  return prob;
}
