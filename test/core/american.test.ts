import { describe, it, expect } from 'vitest';
import {
  americanFdValue,
  americanGreeks,
  americanImpliedVol,
  americanValue,
  americanValueCurve,
  solveBackward,
} from '../../src/core/american.js';
import { bbsrValue, crrValue } from '../../src/core/binomial.js';
import { bsmValue } from '../../src/core/bsm.js';
import { mertonGreeks, mertonValue } from '../../src/core/merton.js';
import type { Jumps, OptionInputs, OptionKind } from '../../src/core/types.js';

type Case = [OptionKind, number, number, number, number, number, number]; // kind S K T r q sigma

/** A case as the pricers take it. */
const opt = (c: Case): OptionInputs => ({ kind: c[0], S: c[1], K: c[2], T: c[3], r: c[4], q: c[5], sigma: c[6] });

/** Reference: Broadie-Detemple BBSR tree (binomial.ts) with many steps. */
const tree = (c: Case, steps = 8000): number => bbsrValue(opt(c), { american: true, steps });

/** Small deterministic generator for the random cases (reproducible). */
function lcg(seed: number): () => number {
  let s = seed >>> 0;
  return () => {
    s = (Math.imul(s, 1664525) + 1013904223) >>> 0;
    return s / 4294967296;
  };
}

const HULL: Case = ['put', 50, 50, 5 / 12, 0.1, 0, 0.4];

describe('binomial reference trees', () => {
  it('CRR reproduces the published tree values for the American put S=K=50, r=10%, σ=40%, T=5 months', () => {
    // Hull, Options, Futures, and Other Derivatives, the American put example of the binomial-tree
    // chapter: 5, 30, 50, 100, 500 steps give 4.49, 4.263, 4.272, 4.278, 4.283 (from memory).
    const published: [number, number, number][] = [
      [5, 4.49, 0.005],
      [30, 4.263, 0.0005],
      [50, 4.272, 0.0005],
      [100, 4.278, 0.0005],
      [500, 4.283, 0.0005],
    ];
    for (const [n, v, tol] of published) {
      expect(Math.abs(crrValue({ kind: 'put', S: 50, K: 50, T: 5 / 12, r: 0.1, q: 0, sigma: 0.4 }, { american: true, steps: n }) - v)).toBeLessThan(tol);
    }
  });

  it('BBSR converges (successive doublings agree to 1e-5) and the European tree matches BSM', () => {
    const a = tree(HULL, 4000);
    const b = tree(HULL, 8000);
    expect(Math.abs(a - b)).toBeLessThan(1e-5);
    // Hull's "converging near 4.284" (from memory)
    expect(Math.abs(b - 4.284)).toBeLessThan(5e-4);
    const eu = bbsrValue({ kind: 'put', S: 50, K: 50, T: 5 / 12, r: 0.1, q: 0, sigma: 0.4 }, { american: false, steps: 2000 });
    expect(Math.abs(eu - bsmValue({ kind: 'put', S: 50, K: 50, T: 5 / 12, r: 0.1, q: 0, sigma: 0.4 }))).toBeLessThan(1e-5);
  });
});

describe('americanFdValue: Hull American put and grid convergence', () => {
  it('converges to the tree reference as the grid is refined (table printed)', () => {
    const ref = tree(HULL, 8000);
    const rows: string[] = [];
    const errs: number[] = [];
    for (const [nx, nt] of [
      [25, 25],
      [50, 50],
      [100, 100],
      [200, 200],
      [400, 400],
    ]) {
      const v = americanFdValue(opt(HULL), { nx, nt });
      errs.push(Math.abs(v - ref));
      rows.push(`${String(nx).padStart(5)} ${String(nt).padStart(5)}  ${v.toFixed(7)}  ${(v - ref).toExponential(2)}`);
    }
    console.log(`American put S=K=50 r=10% σ=40% T=5/12 (Hull); BBSR(8000) reference ${ref.toFixed(7)}\n   nx    nt  value      error\n${rows.join('\n')}`);
    // the coarsest grid is clearly off; from 100 on the errors are at the level of the tree's own
    // (a few 1e-6), and the finer solutions agree with each other
    expect(errs[0]).toBeGreaterThan(5 * errs[2]);
    for (let i = 2; i < errs.length; i++) expect(errs[i]).toBeLessThan(1e-5);
    expect(Math.abs(americanValue(opt(HULL)) - ref)).toBeLessThan(1e-4);
    expect(Math.abs(americanValue(opt(HULL), { accuracy: 'fine' }) - ref)).toBeLessThan(3e-5);
  });

  it('is within 1e-4 of the BBSR tree on random typical cases (puts and calls with yield)', () => {
    const rnd = lcg(2026);
    let worst = 0;
    for (let i = 0; i < 16; i++) {
      const kind: OptionKind = rnd() < 0.6 ? 'put' : 'call';
      const c: Case = [kind, 100 * (0.75 + 0.5 * rnd()), 100, 0.05 + 1.95 * rnd(), 0.1 * rnd(), (kind === 'call' ? 0.08 : 0.04) * rnd(), 0.1 + 0.5 * rnd()];
      const err = Math.abs(americanValue(opt(c)) - tree(c, 6000));
      worst = Math.max(worst, err);
      expect(err, `case ${c.join(' ')}`).toBeLessThan(1e-4);
    }
    console.log(`worst |FD − BBSR| over 16 random cases: ${worst.toExponential(2)}`);
  });

  it('solves the European problem with the same machinery, converging to BSM (BDF2 and Crank-Nicolson)', () => {
    const K = 100;
    for (const [kind, T, r, q, sigma, scheme] of [
      ['put', 1, 0.05, 0.02, 0.25, 'bdf2'],
      ['call', 0.5, 0.03, 0.01, 0.4, 'bdf2'],
      ['put', 1, 0.05, 0.02, 0.25, 'cn'],
    ] as [OptionKind, number, number, number, number, 'cn' | 'bdf2'][]) {
      const worst = (n: number, nt: number): number => {
        const xK = Math.log(K);
        const x = new Float64Array(n);
        const h = (10 * sigma * Math.sqrt(T)) / (n - 1);
        for (let i = 0; i < n; i++) x[i] = xK + (i - (n - 1) / 2) * h;
        const sol = solveBackward({ kind, K, T, r, q, sigma }, x, { nt, american: false, scheme });
        let e = 0;
        for (const S of [80, 95, 100, 110, 125]) {
          const i = Math.round((Math.log(S) - x[0]) / h);
          e = Math.max(e, Math.abs(sol.v[i] - bsmValue({ kind, S: Math.exp(x[i]), K, T, r, q, sigma })));
        }
        return e;
      };
      const coarse = worst(401, 200);
      const fine = worst(1601, 800);
      expect(coarse).toBeLessThan(2e-4);
      expect(fine).toBeLessThan(1.5e-5);
      expect(fine).toBeLessThan(coarse / 8); // second order in h and Δt: 16× in theory
    }
  });
});

describe('American identities', () => {
  it("Merton's theorem: an American call without dividends equals the European one", () => {
    for (const c of [
      ['call', 100, 100, 1, 0.05, 0, 0.2],
      ['call', 90, 110, 0.5, 0.08, 0, 0.35],
      ['call', 120, 100, 2, 0.0, 0, 0.3],
    ] as Case[]) {
      expect(Math.abs(americanValue(opt(c)) - bsmValue(opt(c)))).toBeLessThan(1e-4);
    }
  });

  it('American ≥ European and ≥ intrinsic value; put-call symmetry C(S,K,r,q) = P(K,S,q,r)', () => {
    const rnd = lcg(7);
    for (let i = 0; i < 12; i++) {
      const kind: OptionKind = rnd() < 0.5 ? 'put' : 'call';
      const S = 60 + 80 * rnd();
      const c: Case = [kind, S, 100, 0.02 + 2 * rnd(), 0.1 * rnd(), 0.08 * rnd(), 0.1 + 0.5 * rnd()];
      const v = americanValue(opt(c));
      expect(v).toBeGreaterThanOrEqual(bsmValue(opt(c)) - 2e-5);
      expect(v).toBeGreaterThanOrEqual(kind === 'call' ? Math.max(S - 100, 0) : Math.max(100 - S, 0));
    }
    // McDonald-Schroder symmetry (an identity of the model, checked across two different solves)
    const call = americanValue({ kind: 'call', S: 110, K: 100, T: 1, r: 0.03, q: 0.07, sigma: 0.3 });
    const put = americanValue({ kind: 'put', S: 100, K: 110, T: 1, r: 0.07, q: 0.03, sigma: 0.3 });
    expect(Math.abs(call - put)).toBeLessThan(1e-4);
  });

  it('smooth pasting: delta tends to −1 and value to K − S at the put exercise boundary', () => {
    const [K, T, r, q, sigma] = [100, 1, 0.08, 0, 0.25];
    const timeValue = (S: number): number => americanValue({ kind: 'put', S, K, T, r, q, sigma }) - (K - S);
    // locate the boundary: the largest S where the value is (numerically) intrinsic
    let lo = 50;
    let hi = 100;
    for (let k = 0; k < 30; k++) {
      const m = 0.5 * (lo + hi);
      if (timeValue(m) <= 1e-6) lo = m;
      else hi = m;
    }
    const b = lo;
    // the tree puts the boundary within 1% of it
    expect(bbsrValue({ kind: 'put', S: b * 0.99, K, T, r, q, sigma }, { american: true, steps: 4000 }) - (K - b * 0.99)).toBeLessThan(1e-9);
    expect(bbsrValue({ kind: 'put', S: b * 1.01, K, T, r, q, sigma }, { american: true, steps: 4000 }) - (K - b * 1.01)).toBeGreaterThan(1e-4);
    const above = americanGreeks({ kind: 'put', S: b * 1.02, K, T, r, q, sigma });
    expect(above.delta).toBeGreaterThan(-1);
    expect(above.delta).toBeLessThan(-0.9);
    const below = americanGreeks({ kind: 'put', S: b * 0.98, K, T, r, q, sigma });
    expect(below.delta).toBeCloseTo(-1, 6);
    expect(below.value).toBeCloseTo(K - b * 0.98, 8);
    expect(below.theta).toBeCloseTo(0, 8);
    // first-order contact: the time value V − (K − S) over the distance from the boundary falls
    // towards 0 as the spot nears the boundary (a kink would leave it at a positive constant)
    const slope = (f: number): number => timeValue(b * (1 + f)) / (b * f);
    const s1 = slope(0.01);
    const s2 = slope(0.02);
    const s4 = slope(0.04);
    expect(s1).toBeLessThan(s2);
    expect(s2).toBeLessThan(s4);
    expect(s1).toBeLessThan(0.5 * s4); // 0.25 for an exact quadratic contact at an exact boundary
    expect(s1).toBeLessThan(0.03);
  });

  it('negative rates: a put with q < r < 0 (double exercise boundary, projected SOR) matches the tree', () => {
    const c: Case = ['put', 100, 100, 2, -0.01, -0.04, 0.15];
    const ref = tree(c, 6000);
    expect(ref).toBeGreaterThan(bsmValue(opt(c)) + 1e-3); // early exercise does matter here
    expect(Math.abs(americanValue(opt(c)) - ref)).toBeLessThan(2e-4);
  });

  it('σ = 0 gives the best deterministic exercise time; T = 0 gives intrinsic value', () => {
    // put, r > 0: exercise at once if K − S > K e^{−rT} − S e^{−qT}
    const [S, K, T, r, q] = [90, 100, 1, 0.05, 0.0];
    const best = Math.max(K - S, K * Math.exp(-r * T) - S * Math.exp(-q * T), 0);
    expect(americanValue({ kind: 'put', S, K, T, r, q, sigma: 0 })).toBeCloseTo(best, 12);
    expect(americanValue({ kind: 'call', S: 120, K: 100, T: 0, r: 0.05, q: 0, sigma: 0.3 })).toBe(20);
    const g = americanGreeks({ kind: 'put', S: 90, K: 100, T: 0, r: 0.05, q: 0, sigma: 0.3 });
    expect(g).toEqual({ value: 10, delta: -1, gamma: 0, vega: 0, theta: 0, rho: 0 });
  });

  it('gives finite figures within the American bounds on extreme inputs', () => {
    for (const kind of ['put', 'call'] as OptionKind[]) {
      for (const S of [1, 100, 5000]) {
        for (const T of [1e-6, 1 / 365, 30]) {
          for (const sigma of [0, 0.01, 3]) {
            for (const [r, q] of [
              [0.05, 0],
              [-0.02, -0.05],
              [0.2, 0.1],
            ]) {
              const g = americanGreeks({ kind, S, K: 100, T, r, q, sigma });
              for (const v of Object.values(g)) expect(Number.isFinite(v), `${kind} ${S} ${T} ${sigma} ${r} ${q}`).toBe(true);
              expect(g.value).toBeGreaterThanOrEqual(kind === 'put' ? Math.max(100 - S, 0) : Math.max(S - 100, 0));
              expect(Math.abs(g.delta)).toBeLessThanOrEqual(Math.max(1, Math.exp(-q * T)) + 1e-12);
              expect(g.gamma).toBeGreaterThanOrEqual(0);
            }
          }
        }
      }
    }
  });

  it('rejects bad input with a clear error', () => {
    expect(() => americanGreeks({ kind: 'put', S: -1, K: 100, T: 1, r: 0.05, q: 0, sigma: 0.2 })).toThrow(/S must be/);
    expect(() => americanGreeks({ kind: 'put', S: 100, K: 100, T: Number.NaN, r: 0.05, q: 0, sigma: 0.2 })).toThrow(/T must be/);
    expect(() => americanValueCurve({ kind: 'put', K: 100, T: 1, r: 0.05, q: 0, sigma: 0.2 }, 50, 10)).toThrow(/sLo < sHi/);
  });
});

describe('americanGreeks against bumped trees', () => {
  const cases: Case[] = [HULL, ['put', 95, 100, 0.5, 0.05, 0.01, 0.25], ['call', 105, 100, 1, 0.04, 0.07, 0.3]];
  for (const c of cases) {
    it(`${c.join(' ')}`, () => {
      const g = americanGreeks(opt(c));
      const [kind, S, K, T, r, q, sigma] = c;
      const V = (s: number, t: number, rate: number, vol: number): number => bbsrValue({ kind, S: s, K, T: t, r: rate, q, sigma: vol }, { american: true, steps: 6000 });
      const v0 = V(S, T, r, sigma);
      const hS = 0.01 * S;
      const up = V(S + hS, T, r, sigma);
      const dn = V(S - hS, T, r, sigma);
      expect(Math.abs(g.value - v0)).toBeLessThan(1e-4);
      expect(Math.abs(g.delta - (up - dn) / (2 * hS))).toBeLessThan(2e-4);
      // the tree's second difference has an O(h²) bias of its own
      expect(Math.abs(g.gamma - (up - 2 * v0 + dn) / (hS * hS)) / g.gamma).toBeLessThan(0.01);
      const vega = (V(S, T, r, sigma + 0.005) - V(S, T, r, sigma - 0.005)) / 1; // per vol point
      expect(Math.abs(g.vega - vega)).toBeLessThan(2e-4);
      const rho = V(S, T, r + 0.005, sigma) - V(S, T, r - 0.005, sigma); // per 1% of rate
      expect(Math.abs(g.rho - rho)).toBeLessThan(2e-4);
      const day = 1 / 365;
      const theta = (V(S, T - day, r, sigma) - V(S, T + day, r, sigma)) / 2; // per calendar day
      expect(Math.abs(g.theta - theta)).toBeLessThan(2e-5);
      // the backward equation itself: V_t + ½σ²S²Γ + (r−q)SΔ − rV = 0 where not exercised
      const pde = -(0.5 * sigma * sigma * S * S * g.gamma + (r - q) * S * g.delta - r * g.value) / 365;
      expect(Math.abs(g.theta - pde)).toBeLessThan(2e-5);
    });
  }
});

describe('American gamma', () => {
  it('matches second differences of fine-accuracy values and is smooth across spots', () => {
    // (Crank-Nicolson with the projection leaves undamped high-frequency noise from the moving
    // exercise boundary, about ±0.2% in gamma here; the BDF2 steps damp it.)
    const [K, T, r, q, sigma] = [100, 0.5, 0.05, 0.01, 0.25];
    const f = (s: number): number => americanValue({ kind: 'put', S: s, K, T, r, q, sigma }, { accuracy: 'fine' });
    const h = 0.5;
    const bumped = (f(95 + h) - 2 * f(95) + f(95 - h)) / (h * h);
    const g = americanGreeks({ kind: 'put', S: 95, K, T, r, q, sigma }).gamma;
    expect(Math.abs(g - bumped) / bumped).toBeLessThan(5e-4);
    const sweep: number[] = [];
    for (let s = 88; s <= 100; s += 0.5) sweep.push(americanGreeks({ kind: 'put', S: s, K, T, r, q, sigma }).gamma);
    for (let i = 1; i < sweep.length - 1; i++) {
      expect(Math.abs(sweep[i + 1] - 2 * sweep[i] + sweep[i - 1])).toBeLessThan(3e-5);
    }
  });
});

describe('americanValueCurve', () => {
  it('one solve agrees with the tree across the spot range and continues by the asymptotes', () => {
    for (const [kind, K, T, r, q, sigma] of [
      ['put', 100, 0.5, 0.05, 0.01, 0.3],
      ['call', 100, 1, 0.03, 0.06, 0.25],
    ] as [OptionKind, number, number, number, number, number][]) {
      const f = americanValueCurve({ kind, K, T, r, q, sigma }, 20, 400);
      for (const S of [40, 70, 85, 97.3, 100, 104, 120, 150]) {
        const ref = bbsrValue({ kind, S, K, T, r, q, sigma }, { american: true, steps: 6000 });
        expect(Math.abs(f(S) - ref), `${kind} S=${S}`).toBeLessThan(1e-4);
      }
      // far outside: intrinsic deep in the money (both have early exercise here), 0 far out
      if (kind === 'put') {
        expect(f(1)).toBe(K - 1);
        expect(f(0)).toBe(K);
        expect(f(5000)).toBe(0);
      } else {
        expect(f(1e-3)).toBe(0);
        expect(f(5000)).toBe(5000 - K);
      }
      // finite and ≥ intrinsic everywhere on a fine sweep
      for (let S = 1; S < 600; S *= 1.01) {
        const v = f(S);
        expect(Number.isFinite(v)).toBe(true);
        expect(v).toBeGreaterThanOrEqual(kind === 'call' ? Math.max(S - K, 0) : Math.max(K - S, 0));
      }
    }
  });

  it('a call without dividends follows BSM over the whole curve (Merton)', () => {
    const f = americanValueCurve({ kind: 'call', K: 100, T: 1, r: 0.05, q: 0, sigma: 0.3 }, 30, 300);
    for (const S of [30, 60, 90, 100, 110, 150, 300]) {
      expect(Math.abs(f(S) - bsmValue({ kind: 'call', S, K: 100, T: 1, r: 0.05, q: 0, sigma: 0.3 }))).toBeLessThan(1e-4);
    }
    // far beyond the grid the continuation S − K e^{−rT} holds
    expect(f(1e6)).toBeCloseTo(1e6 - 100 * Math.exp(-0.05), 6);
  });
});

describe('americanImpliedVol', () => {
  it('recovers the volatility of a tree price and reports bounds', () => {
    const c: Case = ['put', 95, 100, 0.75, 0.05, 0.01, 0.32];
    const price = tree(c, 6000);
    const res = americanImpliedVol({ kind: 'put', S: 95, K: 100, T: 0.75, r: 0.05, q: 0.01 }, price);
    expect(res.ok).toBe(true);
    if (res.ok) {
      expect(Math.abs(res.iv - 0.32)).toBeLessThan(1e-4);
      expect(res.vega).toBeGreaterThan(0);
    }
    const low = americanImpliedVol({ kind: 'put', S: 95, K: 100, T: 0.75, r: 0.05, q: 0.01 }, 4.99);
    expect(low.ok).toBe(false);
    if (!low.ok) {
      expect(low.bound).toBe('lower');
      expect(low.boundValue).toBe(5);
    }
    const high = americanImpliedVol({ kind: 'put', S: 95, K: 100, T: 0.75, r: 0.05, q: 0.01 }, 100);
    expect(high.ok).toBe(false);
    if (!high.ok) expect(high.bound).toBe('upper');
    const bad = americanImpliedVol({ kind: 'put', S: 95, K: 100, T: 0.75, r: 0.05, q: 0.01 }, Number.NaN);
    expect(bad.ok).toBe(false);
    // with jumps: the diffusion volatility of a price made with σ = 22%
    const j: Jumps = { intensity: 1, mean: -0.1, sd: 0.15 };
    const pj = americanValue({ kind: 'put', S: 95, K: 100, T: 0.75, r: 0.05, q: 0.01, sigma: 0.22 }, { jumps: j });
    const rj = americanImpliedVol({ kind: 'put', S: 95, K: 100, T: 0.75, r: 0.05, q: 0.01 }, pj, j);
    expect(rj.ok).toBe(true);
    if (rj.ok) expect(Math.abs(rj.iv - 0.22)).toBeLessThan(1e-6);
  });
});

describe('American options with Merton jumps (the PIDE)', () => {
  const DHFV: Jumps = { intensity: 0.1, mean: -0.9, sd: 0.45 };

  it('European mode of the PIDE solver converges to the Merton series', () => {
    const K = 100;
    for (const [kind, T, r, q, sigma, j] of [
      ['put', 0.25, 0.05, 0, 0.15, DHFV],
      ['call', 1, 0.05, 0.02, 0.2, { intensity: 1, mean: -0.1, sd: 0.15 }],
    ] as [OptionKind, number, number, number, number, Jumps][]) {
      const worst = (n: number, nt: number): number => {
        const x = new Float64Array(n);
        const sdTot = Math.sqrt((sigma * sigma + j.intensity * (j.mean * j.mean + j.sd * j.sd)) * T);
        const h = (12 * sdTot) / (n - 1);
        for (let i = 0; i < n; i++) x[i] = Math.log(K) + (i - (n - 1) / 2) * h;
        const sol = solveBackward({ kind, K, T, r, q, sigma, jumps: j }, x, { nt, american: false });
        let e = 0;
        for (const S of [80, 95, 100, 110, 125]) {
          const i = Math.round((Math.log(S) - x[0]) / h);
          e = Math.max(e, Math.abs(sol.v[i] - mertonValue({ kind, S: Math.exp(x[i]), K, T, r, q, sigma }, j)));
        }
        return e;
      };
      const coarse = worst(201, 50);
      const fine = worst(801, 200);
      expect(fine).toBeLessThan(6e-4); // the spatial error of this uniform test grid
      expect(fine).toBeLessThan(coarse / 8); // second order: 16× in theory
    }
  });

  it("reproduces the published American put under Merton jumps (d'Halluin, Forsyth and Vetzal)", () => {
    // d'Halluin, Forsyth and Vetzal, "Robust numerical methods for contingent claims under jump
    // diffusion processes", IMA J. Numer. Anal. 25 (2005): S = K = 100, T = 0.25, σ = 0.15,
    // r = 0.05, λ = 0.1, log jump N(−0.9, 0.45²): European put 3.149026, American put 3.241251
    // (both from memory).
    expect(Math.abs(mertonValue({ kind: 'put', S: 100, K: 100, T: 0.25, r: 0.05, q: 0, sigma: 0.15 }, DHFV) - 3.149026)).toBeLessThan(2e-6);
    expect(Math.abs(americanValue({ kind: 'put', S: 100, K: 100, T: 0.25, r: 0.05, q: 0, sigma: 0.15 }, { jumps: DHFV }) - 3.241251)).toBeLessThan(1e-4);
  });

  it("Merton's theorem with jumps: an American call without dividends is the European Merton call", () => {
    const j: Jumps = { intensity: 1, mean: -0.1, sd: 0.15 };
    const g = americanGreeks({ kind: 'call', S: 100, K: 100, T: 1, r: 0.05, q: 0, sigma: 0.2 }, { jumps: j });
    const m = mertonGreeks({ kind: 'call', S: 100, K: 100, T: 1, r: 0.05, q: 0, sigma: 0.2 }, j);
    expect(Math.abs(g.value - m.value)).toBeLessThan(1.5e-4);
    expect(Math.abs(g.delta - m.delta)).toBeLessThan(1e-4);
    expect(Math.abs(g.gamma - m.gamma)).toBeLessThan(1e-5);
    expect(Math.abs(g.vega - m.vega)).toBeLessThan(1e-4);
    expect(Math.abs(g.theta - m.theta)).toBeLessThan(1e-5);
    expect(Math.abs(g.rho - m.rho)).toBeLessThan(1e-4);
  });

  it('jumps with zero intensity change nothing; with jumps the put is worth at least the European and intrinsic', () => {
    const none = americanValue({ kind: 'put', S: 95, K: 100, T: 0.5, r: 0.05, q: 0, sigma: 0.25 }, { jumps: { intensity: 0, mean: -0.2, sd: 0.1 } });
    expect(none).toBe(americanValue({ kind: 'put', S: 95, K: 100, T: 0.5, r: 0.05, q: 0, sigma: 0.25 }));
    const j: Jumps = { intensity: 2, mean: -0.1, sd: 0.1 };
    for (const S of [70, 90, 100, 115]) {
      const v = americanValue({ kind: 'put', S, K: 100, T: 0.5, r: 0.05, q: 0, sigma: 0.25 }, { jumps: j });
      expect(v).toBeGreaterThanOrEqual(mertonValue({ kind: 'put', S, K: 100, T: 0.5, r: 0.05, q: 0, sigma: 0.25 }, j) - 1e-4);
      expect(v).toBeGreaterThanOrEqual(Math.max(100 - S, 0));
      expect(v).toBeGreaterThan(americanValue({ kind: 'put', S, K: 100, T: 0.5, r: 0.05, q: 0, sigma: 0.25 }) - 1e-9); // jumps add value here
    }
  });

  it('the value curve with jumps agrees with the pointwise values', () => {
    const j: Jumps = { intensity: 1, mean: -0.1, sd: 0.15 };
    const f = americanValueCurve({ kind: 'put', K: 100, T: 0.5, r: 0.05, q: 0, sigma: 0.25 }, 20, 400, j);
    for (const S of [60, 85, 100, 120, 160]) {
      expect(Math.abs(f(S) - americanValue({ kind: 'put', S, K: 100, T: 0.5, r: 0.05, q: 0, sigma: 0.25 }, { jumps: j }))).toBeLessThan(1e-4);
    }
  });
});
