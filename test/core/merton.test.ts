import { describe, it, expect } from 'vitest';
import { mertonGreeks, mertonImpliedVol, mertonValue } from '../../src/core/merton.js';
import { bsmGreeks, bsmValue } from '../../src/core/bsm.js';
import type { Jumps, OptionKind } from '../../src/core/types.js';
import { integrate } from '../support/quadrature.js';

/** Poisson(μ) weight of n, in logs (no overflow for large μ). */
function poisson(mu: number, n: number): number {
  let lf = 0;
  for (let k = 2; k <= n; k++) lf += Math.log(k);
  return Math.exp(-mu + n * Math.log(mu) - lf);
}


/**
 * Direct numerical integration of the discounted payoff over the law of S_T: a Poisson(λT)
 * mixture (n jumps) of lognormals, ln S_T ~ N(ln S + (r − q − λκ − σ²/2)T + n m, σ²T + n δ²).
 * Each normal integral is split at the strike's z, where the payoff has its kink.
 */
function quadratureValue(kind: OptionKind, S: number, K: number, T: number, r: number, q: number, sigma: number, j: Jumps): number {
  const kappa = Math.exp(j.mean + 0.5 * j.sd * j.sd) - 1;
  const lam = j.intensity * T;
  let total = 0;
  let weight = 0;
  for (let n = 0; n < 400; n++) {
    const w = poisson(lam, n);
    const mu = Math.log(S) + (r - q - j.intensity * kappa - 0.5 * sigma * sigma) * T + n * j.mean;
    const s = Math.sqrt(sigma * sigma * T + n * j.sd * j.sd);
    const pay = (z: number): number => {
      const ST = Math.exp(mu + s * z);
      const p = kind === 'call' ? ST - K : K - ST;
      return p > 0 ? (p * Math.exp(-0.5 * z * z)) / Math.sqrt(2 * Math.PI) : 0;
    };
    const zk = (Math.log(K) - mu) / s;
    const lo = -12;
    const hi = 12;
    let e: number;
    if (zk <= lo || zk >= hi) e = integrate(pay, lo, hi, 24);
    else e = integrate(pay, lo, zk, 16) + integrate(pay, zk, hi, 16);
    total += w * e;
    weight += w;
    if (n > lam && 1 - weight < 1e-17) break;
  }
  return Math.exp(-r * T) * total;
}

const J: Jumps = { intensity: 1, mean: -0.1, sd: 0.15 };

describe('mertonValue', () => {
  it('equals Black-Scholes-Merton exactly with no jumps (λ = 0)', () => {
    for (const kind of ['call', 'put'] as OptionKind[]) {
      for (const [S, K, T, r, q, s] of [
        [100, 100, 1, 0.05, 0.02, 0.2],
        [80, 120, 0.25, 0.01, 0, 0.6],
      ]) {
        expect(mertonValue({ kind, S, K, T, r, q, sigma: s }, { intensity: 0, mean: -0.2, sd: 0.3 })).toBe(bsmValue({ kind, S, K, T, r, q, sigma: s }));
        expect(mertonGreeks({ kind, S, K, T, r, q, sigma: s }, { intensity: 0, mean: -0.2, sd: 0.3 })).toEqual(bsmGreeks({ kind, S, K, T, r, q, sigma: s }));
      }
    }
  });

  it('matches direct integration of the discounted payoff over the Poisson mixture of lognormals', () => {
    const cases: [OptionKind, number, number, number, number, number, number, Jumps][] = [
      ['call', 100, 100, 0.5, 0.05, 0.02, 0.2, J],
      ['put', 100, 90, 1, 0.03, 0.0, 0.15, { intensity: 3, mean: -0.05, sd: 0.1 }],
      ['call', 50, 70, 2, 0.04, 0.01, 0.25, { intensity: 0.5, mean: 0.1, sd: 0.3 }],
      ['put', 100, 100, 0.1, 0.08, 0.0, 0.1, { intensity: 10, mean: 0, sd: 0.05 }],
    ];
    for (const [kind, S, K, T, r, q, s, j] of cases) {
      const series = mertonValue({ kind, S, K, T, r, q, sigma: s }, j);
      const quad = quadratureValue(kind, S, K, T, r, q, s, j);
      expect(Math.abs(series - quad), `${kind} ${S} ${K} ${T}`).toBeLessThan(1e-9 * Math.max(1, quad));
    }
  });

  it("reproduces a published European put under Merton jumps (d'Halluin, Forsyth and Vetzal)", () => {
    // d'Halluin, Forsyth and Vetzal, "Robust numerical methods for contingent claims under jump
    // diffusion processes", IMA J. Numer. Anal. 25 (2005): S = K = 100, T = 0.25, σ = 0.15,
    // r = 0.05, λ = 0.1, log jump N(−0.9, 0.45²): European put 3.149026 (from memory).
    const v = mertonValue({ kind: 'put', S: 100, K: 100, T: 0.25, r: 0.05, q: 0, sigma: 0.15 }, { intensity: 0.1, mean: -0.9, sd: 0.45 });
    expect(Math.abs(v - 3.149026)).toBeLessThan(2e-6);
  });

  it('satisfies put-call parity C − P = S e^{−qT} − K e^{−rT} (the jumps are compensated)', () => {
    for (const [S, K, T, r, q, s, j] of [
      [100, 100, 0.5, 0.05, 0.02, 0.2, J],
      [100, 140, 3, 0.02, 0.04, 0.1, { intensity: 5, mean: -0.2, sd: 0.2 }],
      [30, 25, 0.05, 0.1, 0, 0.4, { intensity: 200, mean: 0.01, sd: 0.02 }],
      // λT = 900: the weights are computed in logs (e^{−λ'T} would underflow)
      [100, 105, 1, 0.03, 0.01, 0.1, { intensity: 900, mean: 0, sd: 0.01 }],
    ] as [number, number, number, number, number, number, Jumps][]) {
      const c = mertonValue({ kind: 'call', S, K, T, r, q, sigma: s }, j);
      const p = mertonValue({ kind: 'put', S, K, T, r, q, sigma: s }, j);
      expect(Math.abs(c - p - (S * Math.exp(-q * T) - K * Math.exp(-r * T)))).toBeLessThan(1e-10 * S);
    }
  });

  it('with σ = 0 and fixed jump sizes is the Poisson average of the discounted certain payoffs', () => {
    // S_T = S e^{(r − q − λκ)T + n m} with n ~ Poisson(λT): an independent closed form
    const [S, K, T, r, q] = [100, 100, 1, 0.03, 0.01];
    const j: Jumps = { intensity: 2, mean: -0.08, sd: 0 };
    const kappa = Math.exp(j.mean) - 1;
    for (const kind of ['call', 'put'] as OptionKind[]) {
      let v = 0;
      for (let n = 0; n < 60; n++) {
        const ST = S * Math.exp((r - q - j.intensity * kappa) * T + n * j.mean);
        v += poisson(j.intensity * T, n) * Math.exp(-r * T) * Math.max(kind === 'call' ? ST - K : K - ST, 0);
      }
      expect(Math.abs(mertonValue({ kind, S, K, T, r, q, sigma: 0 }, j) - v)).toBeLessThan(1e-12 * S);
    }
  });

  it('jumps add value to an at-the-money option, and the value stays within its bounds', () => {
    const bsm = bsmValue({ kind: 'put', S: 100, K: 100, T: 1, r: 0.05, q: 0, sigma: 0.2 });
    expect(mertonValue({ kind: 'put', S: 100, K: 100, T: 1, r: 0.05, q: 0, sigma: 0.2 }, J)).toBeGreaterThan(bsm);
    const far = mertonValue({ kind: 'call', S: 100, K: 1e6, T: 1, r: 0.05, q: 0, sigma: 0.2 }, { intensity: 1, mean: 0.5, sd: 0.5 });
    expect(far).toBeGreaterThanOrEqual(0);
    expect(Number.isFinite(far)).toBe(true);
    const deep = mertonValue({ kind: 'put', S: 1e-3, K: 100, T: 1, r: 0.05, q: 0, sigma: 0.2 }, J);
    expect(deep).toBeLessThanOrEqual(100 * Math.exp(-0.05));
  });

  it('gives finite figures on extreme inputs', () => {
    for (const kind of ['call', 'put'] as OptionKind[]) {
      for (const S of [1e-3, 100, 1e5]) {
        for (const T of [1e-8, 1 / 365, 30]) {
          for (const sigma of [0, 0.01, 3]) {
            for (const j of [
              { intensity: 0.01, mean: -2, sd: 1 },
              { intensity: 50, mean: 0.1, sd: 0 },
            ] as Jumps[]) {
              const g = mertonGreeks({ kind, S, K: 100, T, r: 0.05, q: 0.02, sigma }, j);
              for (const v of Object.values(g)) expect(Number.isFinite(v), `${kind} ${S} ${T} ${sigma} ${j.intensity}`).toBe(true);
              expect(g.value).toBeGreaterThanOrEqual(0);
            }
          }
        }
      }
    }
  });

  it('rejects bad input with a clear error', () => {
    expect(() => mertonValue({ kind: 'call', S: 100, K: 100, T: 1, r: 0.05, q: 0, sigma: 0.2 }, { intensity: -1, mean: 0, sd: 0.1 })).toThrow(/intensity/);
    expect(() => mertonValue({ kind: 'call', S: 0, K: 100, T: 1, r: 0.05, q: 0, sigma: 0.2 }, J)).toThrow(/spot/);
  });
});

describe('mertonGreeks', () => {
  it('agree with central differences of the value (docs/design.md §3 units)', () => {
    for (const [kind, S, K, T, r, q, s, j] of [
      ['call', 100, 100, 0.5, 0.05, 0.02, 0.2, J],
      ['put', 95, 100, 1.5, 0.03, 0.01, 0.3, { intensity: 2, mean: -0.15, sd: 0.2 }],
      ['put', 100, 80, 0.2, 0.05, 0.0, 0.15, { intensity: 0.3, mean: -0.3, sd: 0.1 }],
    ] as [OptionKind, number, number, number, number, number, number, Jumps][]) {
      const g = mertonGreeks({ kind, S, K, T, r, q, sigma: s }, j);
      const V = (S1: number, T1: number, r1: number, s1: number): number => mertonValue({ kind, S: S1, K, T: T1, r: r1, q, sigma: s1 }, j);
      const hS = 1e-3 * S;
      expect(g.value).toBe(V(S, T, r, s));
      const hD = 1e-5 * S;
      expect(g.delta).toBeCloseTo((V(S + hD, T, r, s) - V(S - hD, T, r, s)) / (2 * hD), 7);
      expect(g.gamma).toBeCloseTo((V(S + hS, T, r, s) - 2 * V(S, T, r, s) + V(S - hS, T, r, s)) / (hS * hS), 5);
      const h = 1e-5;
      expect(g.vega).toBeCloseTo(((V(S, T, r, s + h) - V(S, T, r, s - h)) / (2 * h)) * 0.01, 7);
      expect(g.rho).toBeCloseTo(((V(S, T, r + h, s) - V(S, T, r - h, s)) / (2 * h)) * 0.01, 7);
      expect(g.theta).toBeCloseTo(-((V(S, T + h, r, s) - V(S, T - h, r, s)) / (2 * h)) / 365, 8);
    }
  });
});

describe('mertonImpliedVol', () => {
  it('recovers the diffusion volatility and reports bounds', () => {
    for (const [kind, K, s] of [
      ['call', 110, 0.25],
      ['put', 90, 0.05],
      ['put', 100, 0.8],
    ] as [OptionKind, number, number][]) {
      const price = mertonValue({ kind, S: 100, K, T: 0.75, r: 0.04, q: 0.01, sigma: s }, J);
      const res = mertonImpliedVol({ kind, S: 100, K, T: 0.75, r: 0.04, q: 0.01 }, price, J);
      expect(res.ok).toBe(true);
      if (res.ok) {
        expect(Math.abs(res.iv - s)).toBeLessThan(1e-9);
        expect(Math.abs(res.vega - mertonGreeks({ kind, S: 100, K, T: 0.75, r: 0.04, q: 0.01, sigma: s }, J).vega)).toBeLessThan(1e-9);
      }
    }
    const floor = mertonValue({ kind: 'call', S: 100, K: 100, T: 0.75, r: 0.04, q: 0.01, sigma: 0 }, J);
    const low = mertonImpliedVol({ kind: 'call', S: 100, K: 100, T: 0.75, r: 0.04, q: 0.01 }, floor * 0.99, J);
    expect(low.ok).toBe(false);
    if (!low.ok) {
      expect(low.bound).toBe('lower');
      expect(low.boundValue).toBeCloseTo(floor, 12);
    }
    const high = mertonImpliedVol({ kind: 'put', S: 100, K: 100, T: 0.75, r: 0.04, q: 0.01 }, 120, J);
    expect(high.ok).toBe(false);
    if (!high.ok) expect(high.bound).toBe('upper');
  });
});
