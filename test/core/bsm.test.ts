/**
 * Black-Scholes-Merton (src/core/bsm.ts) against textbook worked examples, put-call parity,
 * finite differences of the value, the lognormal law (jstat) and the limits.
 */
import { createRequire } from 'node:module';
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { bsmGreeks, bsmValue, probItm } from '../../src/core/bsm.js';
import type { OptionKind } from '../../src/core/types.js';

const require = createRequire(import.meta.url);
const { jStat } = require('jstat') as {
  jStat: { lognormal: { cdf(x: number, mu: number, s: number): number } };
};

const kinds: OptionKind[] = ['call', 'put'];

describe('worked examples', () => {
  it('Hull, Options, Futures, and Other Derivatives, BSM example: S=42, K=40, r=10%, σ=20%, T=0.5 → call 4.76, put 0.81 (from memory)', () => {
    expect(bsmValue({ kind: 'call', S: 42, K: 40, T: 0.5, r: 0.1, q: 0, sigma: 0.2 })).toBeCloseTo(4.76, 2);
    expect(bsmValue({ kind: 'put', S: 42, K: 40, T: 0.5, r: 0.1, q: 0, sigma: 0.2 })).toBeCloseTo(0.81, 2);
  });

  it('Haug, The Complete Guide to Option Pricing Formulas (2nd ed.), generalized BSM: call 2.1334 and put 2.4648 (from memory)', () => {
    expect(bsmValue({ kind: 'call', S: 60, K: 65, T: 0.25, r: 0.08, q: 0, sigma: 0.3 })).toBeCloseTo(2.1334, 4);
    expect(bsmValue({ kind: 'put', S: 100, K: 95, T: 0.5, r: 0.1, q: 0.05, sigma: 0.2 })).toBeCloseTo(2.4648, 4);
  });

  it("Hull, Greek letters chapter, the bank's written call: S=49, K=50, r=5%, σ=20%, T=20 weeks → delta 0.522, gamma 0.066, vega 12.1 per 1.00 of vol, theta −4.31 per year, rho 8.91 per 1.00 of rate (from memory)", () => {
    const g = bsmGreeks({ kind: 'call', S: 49, K: 50, T: 20 / 52, r: 0.05, q: 0, sigma: 0.2 });
    expect(g.delta).toBeCloseTo(0.522, 3);
    expect(g.gamma).toBeCloseTo(0.066, 3);
    expect(g.vega).toBeCloseTo(0.121, 3); // per vol point
    expect(g.theta * 365).toBeCloseTo(-4.31, 2); // ours is per calendar day
    expect(g.rho).toBeCloseTo(0.0891, 4); // per 1% of rate
    expect(g.value).toBeCloseTo(2.4, 1); // Hull: "about $240,000" for 100,000 options
  });
});

const inputs = fc.record({
  S: fc.double({ min: 1, max: 1000, noNaN: true }),
  m: fc.double({ min: 0.3, max: 3, noNaN: true }),
  T: fc.double({ min: 1 / 365, max: 10, noNaN: true }),
  r: fc.double({ min: -0.02, max: 0.15, noNaN: true }),
  q: fc.double({ min: 0, max: 0.1, noNaN: true }),
  sigma: fc.double({ min: 0.01, max: 3, noNaN: true }),
});

describe('identities', () => {
  it('put-call parity C − P = S e^{−qT} − K e^{−rT}, and the same for delta, gamma, vega, theta, rho', () => {
    fc.assert(
      fc.property(inputs, ({ S, m, T, r, q, sigma }) => {
        const K = S * m;
        const c = bsmGreeks({ kind: 'call', S, K, T, r, q, sigma });
        const p = bsmGreeks({ kind: 'put', S, K, T, r, q, sigma });
        const dq = Math.exp(-q * T);
        const dr = Math.exp(-r * T);
        const scale = S + K;
        expect(Math.abs(c.value - p.value - (S * dq - K * dr))).toBeLessThan(1e-12 * scale);
        expect(Math.abs(c.delta - p.delta - dq)).toBeLessThan(1e-14);
        expect(Math.abs(c.gamma - p.gamma)).toBeLessThan(1e-14 * (1 + c.gamma));
        expect(Math.abs(c.vega - p.vega)).toBeLessThan(1e-14 * scale);
        // ∂/∂t of (S e^{−qT} − K e^{−rT}) per day, and ∂/∂r of it per 1%
        expect(Math.abs(c.theta - p.theta - (q * S * dq - r * K * dr) / 365)).toBeLessThan(1e-13 * scale);
        expect(Math.abs(c.rho - p.rho - K * T * dr * 0.01)).toBeLessThan(1e-13 * scale * (1 + T));
        expect(bsmValue({ kind: 'call', S, K, T, r, q, sigma })).toBe(c.value);
        expect(bsmValue({ kind: 'put', S, K, T, r, q, sigma })).toBe(p.value);
      }),
    );
  });

  it('Greeks equal central finite differences of bsmValue (units of docs/design.md §3)', () => {
    const moderate = fc.record({
      S: fc.double({ min: 10, max: 500, noNaN: true }),
      m: fc.double({ min: 0.6, max: 1.6, noNaN: true }),
      T: fc.double({ min: 0.05, max: 5, noNaN: true }),
      r: fc.double({ min: 0, max: 0.1, noNaN: true }),
      q: fc.double({ min: 0, max: 0.06, noNaN: true }),
      sigma: fc.double({ min: 0.08, max: 1.5, noNaN: true }),
      kind: fc.constantFrom<OptionKind>('call', 'put'),
    });
    fc.assert(
      fc.property(moderate, ({ S, m, T, r, q, sigma, kind }) => {
        const K = S * m;
        const V = (s: number, t: number, rr: number, v: number) => bsmValue({ kind, S: s, K, T: t, r: rr, q, sigma: v });
        const g = bsmGreeks({ kind, S, K, T, r, q, sigma });
        const hD = 1e-5 * S;
        const delta = (V(S + hD, T, r, sigma) - V(S - hD, T, r, sigma)) / (2 * hD);
        const hS = 1e-4 * S;
        const gamma = (V(S + hS, T, r, sigma) - 2 * V(S, T, r, sigma) + V(S - hS, T, r, sigma)) / (hS * hS);
        const hv = 1e-5;
        const vega = ((V(S, T, r, sigma + hv) - V(S, T, r, sigma - hv)) / (2 * hv)) * 0.01;
        const hT = 1e-5;
        const theta = -(V(S, T + hT, r, sigma) - V(S, T - hT, r, sigma)) / (2 * hT) / 365;
        const hr = 1e-6;
        const rho = ((V(S, T, r + hr, sigma) - V(S, T, r - hr, sigma)) / (2 * hr)) * 0.01;
        const tol = (x: number, scale: number) => 1e-5 * Math.abs(x) + scale;
        expect(Math.abs(g.delta - delta)).toBeLessThan(tol(delta, 1e-8));
        expect(Math.abs(g.gamma - gamma)).toBeLessThan(tol(gamma, 1e-5 / S));
        expect(Math.abs(g.vega - vega)).toBeLessThan(tol(vega, 1e-8 * S));
        expect(Math.abs(g.theta - theta)).toBeLessThan(tol(theta, 1e-8 * S));
        expect(Math.abs(g.rho - rho)).toBeLessThan(tol(rho, 1e-8 * S));
      }),
      { numRuns: 300 },
    );
  });

  it('probItm matches the lognormal law of S_T (jstat lognormal cdf) under any drift', () => {
    fc.assert(
      fc.property(inputs, fc.double({ min: -0.3, max: 0.4, noNaN: true }), ({ S, m, T, r, q, sigma }, mu) => {
        const K = S * m;
        const mean = Math.log(S) + (mu - q - 0.5 * sigma * sigma) * T;
        const sd = sigma * Math.sqrt(T);
        const below = jStat.lognormal.cdf(K, mean, sd);
        expect(Math.abs(probItm({ kind: 'put', S, K, T, r, q, sigma }, mu) - below)).toBeLessThan(1e-12);
        expect(Math.abs(probItm({ kind: 'call', S, K, T, r, q, sigma }, mu) - (1 - below))).toBeLessThan(1e-12);
      }),
    );
  });

  it('risk-neutral probItm of a call is the discounted-digital identity −e^{rT} ∂C/∂K', () => {
    fc.assert(
      fc.property(inputs, ({ S, m, T, r, q, sigma }) => {
        const K = S * m;
        const h = 1e-5 * K;
        const dCdK = (bsmValue({ kind: 'call', S, K: K + h, T, r, q, sigma }) - bsmValue({ kind: 'call', S, K: K - h, T, r, q, sigma })) / (2 * h);
        expect(Math.abs(probItm({ kind: 'call', S, K, T, r, q, sigma }) + Math.exp(r * T) * dCdK)).toBeLessThan(1e-6);
      }),
    );
  });

  it('value lies within the no-arbitrage bounds and increases with vol', () => {
    fc.assert(
      fc.property(inputs, fc.constantFrom<OptionKind>('call', 'put'), ({ S, m, T, r, q, sigma }, kind) => {
        const K = S * m;
        const fS = S * Math.exp(-q * T);
        const fK = K * Math.exp(-r * T);
        const v = bsmValue({ kind, S, K, T, r, q, sigma });
        const lower = Math.max(kind === 'call' ? fS - fK : fK - fS, 0);
        expect(v).toBeGreaterThanOrEqual(lower);
        expect(v).toBeLessThanOrEqual(kind === 'call' ? fS : fK);
        // (up to rounding: deep in or out of the money the value barely moves with vol)
        expect(bsmValue({ kind, S, K, T, r, q, sigma: sigma * 1.01 })).toBeGreaterThanOrEqual(v * (1 - 1e-15));
      }),
    );
  });
});

describe('limits', () => {
  it('T = 0: intrinsic value, step deltas (½ at the money), no other Greeks', () => {
    expect(bsmGreeks({ kind: 'call', S: 110, K: 100, T: 0, r: 0.05, q: 0.01, sigma: 0.3 })).toEqual({ value: 10, delta: 1, gamma: 0, vega: 0, theta: 0, rho: 0 });
    expect(bsmGreeks({ kind: 'put', S: 110, K: 100, T: 0, r: 0.05, q: 0.01, sigma: 0.3 }).value).toBe(0);
    expect(bsmGreeks({ kind: 'put', S: 110, K: 100, T: 0, r: 0.05, q: 0.01, sigma: 0.3 }).delta).toBe(0);
    expect(bsmGreeks({ kind: 'put', S: 90, K: 100, T: 0, r: 0.05, q: 0.01, sigma: 0.3 }).delta).toBe(-1);
    expect(bsmGreeks({ kind: 'call', S: 100, K: 100, T: 0, r: 0.05, q: 0.01, sigma: 0.3 }).delta).toBe(0.5);
    expect(bsmValue({ kind: 'put', S: 90, K: 100, T: 0, r: 0.05, q: 0.01, sigma: 0.3 })).toBe(10);
  });

  it('T → 0 approaches the T = 0 values (value and delta)', () => {
    for (const kind of kinds) {
      for (const S of [80, 99, 101, 120]) {
        const g = bsmGreeks({ kind, S, K: 100, T: 1e-9, r: 0.05, q: 0.01, sigma: 0.3 });
        const g0 = bsmGreeks({ kind, S, K: 100, T: 0, r: 0.05, q: 0.01, sigma: 0.3 });
        expect(Math.abs(g.value - g0.value)).toBeLessThan(1e-6);
        expect(Math.abs(g.delta - g0.delta)).toBeLessThan(1e-6);
      }
    }
  });

  it('σ = 0, T > 0: discounted intrinsic of the forward, and σ → 0 approaches it', () => {
    const S = 100;
    const T = 0.5;
    const r = 0.05;
    const q = 0.02;
    for (const K of [90, 100, 101, 103, 110]) {
      const fS = S * Math.exp(-q * T);
      const fK = K * Math.exp(-r * T);
      for (const kind of kinds) {
        const exact = Math.max(kind === 'call' ? fS - fK : fK - fS, 0);
        const g0 = bsmGreeks({ kind, S, K, T, r, q, sigma: 0 });
        expect(g0.value).toBeCloseTo(exact, 12);
        expect(g0.gamma).toBe(0);
        const gs = bsmGreeks({ kind, S, K, T, r, q, sigma: 1e-7 });
        expect(Math.abs(gs.value - g0.value)).toBeLessThan(1e-6);
        expect(Math.abs(gs.delta - g0.delta)).toBeLessThan(1e-6);
        expect(Math.abs(gs.theta - g0.theta)).toBeLessThan(1e-6);
        expect(Math.abs(gs.rho - g0.rho)).toBeLessThan(1e-6);
      }
    }
    // in the money forward: delta e^{−qT}, rho K T e^{−rT} per 1%
    const g = bsmGreeks({ kind: 'call', S: 100, K: 90, T, r, q, sigma: 0 });
    expect(g.delta).toBeCloseTo(Math.exp(-q * T), 14);
    expect(g.rho).toBeCloseTo(90 * T * Math.exp(-r * T) * 0.01, 14);
  });

  it('never NaN or Infinity, and within bounds, for extreme but finite inputs', () => {
    const Ss = [1e-300, 1e-8, 1, 100, 1e8, 1e300];
    const Ks = [1e-300, 1e-6, 1, 100, 1e9, 1e300];
    const Ts = [0, 1e-12, 1 / 365, 1, 30, 100];
    const rs = [-0.1, 0, 0.05, 0.5];
    const qs = [0, 0.03, 0.3];
    const sigmas = [0, 1e-12, 0.01, 0.3, 5, 50];
    let n = 0;
    for (const kind of kinds)
      for (const S of Ss)
        for (const K of Ks)
          for (const T of Ts)
            for (const r of rs)
              for (const q of qs)
                for (const sigma of sigmas) {
                  const g = bsmGreeks({ kind, S, K, T, r, q, sigma });
                  for (const v of Object.values(g)) {
                    if (!Number.isFinite(v)) throw new Error(`${kind} S=${S} K=${K} T=${T} r=${r} q=${q} σ=${sigma}: ${JSON.stringify(g)}`);
                  }
                  expect(g.value).toBeGreaterThanOrEqual(0);
                  expect(Number.isFinite(bsmValue({ kind, S, K, T, r, q, sigma }))).toBe(true);
                  const p = probItm({ kind, S, K, T, r, q, sigma });
                  expect(p >= 0 && p <= 1).toBe(true);
                  n++;
                }
    expect(n).toBe(2 * 6 * 6 * 6 * 4 * 3 * 6);
  });

  it('probItm limits: T = 0 and σ = 0 compare the forward with the strike', () => {
    expect(probItm({ kind: 'call', S: 110, K: 100, T: 0, r: 0.05, q: 0, sigma: 0.3 })).toBe(1);
    expect(probItm({ kind: 'call', S: 90, K: 100, T: 0, r: 0.05, q: 0, sigma: 0.3 })).toBe(0);
    expect(probItm({ kind: 'put', S: 90, K: 100, T: 0, r: 0.05, q: 0, sigma: 0.3 })).toBe(1);
    expect(probItm({ kind: 'call', S: 100, K: 100, T: 0, r: 0.05, q: 0, sigma: 0.3 })).toBe(0);
    // forward under the drift 100 e^{0.2} ≈ 122 > 120 (at the rate, 100 e^{0.05} ≈ 105 would not be)
    const certain = { S: 100, T: 1, r: 0.05, q: 0, sigma: 0 };
    expect(probItm({ ...certain, kind: 'call', K: 120 }, 0.2)).toBe(1);
    expect(probItm({ ...certain, kind: 'put', K: 120 }, 0.2)).toBe(0);
    expect(probItm({ ...certain, kind: 'call', K: 125 }, 0.2)).toBe(0);
  });
});
