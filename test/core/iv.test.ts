/**
 * Implied volatility (src/core/iv.ts): round trips through bsmValue over the whole accuracy
 * grid, a textbook example, and the no-arbitrage bounds.
 *
 * Where the price determines the vol. A price is the difference of two terms,
 * A = S e^{−qT} Φ(±d1) and B = K e^{−rT} Φ(±d2); each carries a relative rounding of about
 * ε = 1.1e−16, so the price handed to impliedVol is uncertain by roughly ε·(A + B) however it was
 * computed. That moves the implied vol by
 *   δσ/σ ≈ ε·(A + B) / (σ·∂P/∂σ) = ε·κ,   κ = (A + B)/(σ·∂P/∂σ),
 * (over this grid the observed error stays below 7·ε·κ). We test every grid point with κ ≤ 1e4,
 * where the vol is determined to better than ~1e−11 (ten times inside the 1e−10 goal), and whose
 * price is a normal double (P > 1e−290 of the spot; below that the price itself has lost digits
 * to underflow). Deep out-of-the-money points have κ ≈ 1/|ln(F/K)|, small, so they are all inside
 * however tiny their price; what falls outside is deep in the money, where the time value is lost
 * in the rounding of A and B, and the prices that underflow to zero, which impliedVol correctly
 * reports as at the lower bound. The region covers over 80% of the grid.
 */
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { impliedVol } from '../../src/core/iv.js';
import { bsmGreeks, bsmValue } from '../../src/core/bsm.js';
import { normCdf } from '../../src/core/normal.js';
import type { OptionKind } from '../../src/core/types.js';

const kinds: OptionKind[] = ['call', 'put'];

function inRegion(kind: OptionKind, S: number, K: number, T: number, r: number, q: number, sigma: number) {
  const g = bsmGreeks({ kind, S, K, T, r, q, sigma });
  const w = kind === 'call' ? 1 : -1;
  const fS = S * Math.exp(-q * T);
  const fK = K * Math.exp(-r * T);
  const sd = sigma * Math.sqrt(T);
  const d1 = Math.log(fS / fK) / sd + 0.5 * sd;
  const terms = fS * normCdf(w * d1) + fK * normCdf(w * (d1 - sd));
  const kappa = terms / (g.vega * 100 * sigma);
  return { price: g.value, vega: g.vega, ok: g.value > 1e-290 * S && kappa <= 1e4 };
}

describe('round trips over the accuracy grid', () => {
  it('K/S 0.5–2, T 1 day–5 years, σ 5%–200%, calls and puts: relative error ≤ 1e−10', () => {
    const ms = [0.5, 0.55, 0.6, 0.7, 0.8, 0.9, 0.95, 0.99, 1, 1.01, 1.05, 1.1, 1.2, 1.35, 1.5, 1.75, 2];
    const Ts = [1 / 365, 2 / 365, 7 / 365, 14 / 365, 30 / 365, 0.25, 0.5, 1, 2, 3, 5];
    const vols = [0.05, 0.07, 0.1, 0.15, 0.2, 0.3, 0.45, 0.6, 0.8, 1, 1.25, 1.5, 2];
    const markets = [
      [0.05, 0.02],
      [0, 0],
      [0.12, 0],
      [0.01, 0.06],
    ];
    let tested = 0;
    let all = 0;
    let tiny = 0;
    let worst = 0;
    let worstAt = '';
    for (const kind of kinds)
      for (const m of ms)
        for (const T of Ts)
          for (const sigma of vols)
            for (const [r, q] of markets) {
              all++;
              const S = 100;
              const K = S * m;
              const reg = inRegion(kind, S, K, T, r, q, sigma);
              if (!reg.ok) continue;
              tested++;
              if (reg.price < 1e-100) tiny++;
              const res = impliedVol({ kind, S, K, T, r, q }, reg.price);
              if (!res.ok) throw new Error(`no solution for ${kind} K=${K} T=${T} σ=${sigma} r=${r} q=${q}: ${res.message}`);
              const err = Math.abs(res.iv / sigma - 1);
              if (err > worst) {
                worst = err;
                worstAt = `${kind} K=${K} T=${T} σ=${sigma} r=${r} q=${q} price=${reg.price}`;
              }
              // the vega returned is the one at the solution
              expect(Math.abs(res.vega - reg.vega)).toBeLessThan(1e-8 * reg.vega + 1e-300);
            }
    expect(worst, worstAt).toBeLessThan(1e-10);
    // the region is most of the grid, and includes prices far below 1e−100
    expect(tested).toBeGreaterThan(0.8 * all);
    expect(tiny).toBeGreaterThan(20);
  });

  it('random points of the same box (fast-check): relative error ≤ 1e−10', () => {
    fc.assert(
      fc.property(
        fc.constantFrom<OptionKind>('call', 'put'),
        fc.double({ min: Math.log(0.5), max: Math.log(2), noNaN: true }),
        fc.double({ min: Math.log(1 / 365), max: Math.log(5), noNaN: true }),
        fc.double({ min: Math.log(0.05), max: Math.log(2), noNaN: true }),
        fc.double({ min: -0.01, max: 0.12, noNaN: true }),
        fc.double({ min: 0, max: 0.08, noNaN: true }),
        (kind, lm, lT, lv, r, q) => {
          const S = 57.3;
          const K = S * Math.exp(lm);
          const T = Math.exp(lT);
          const sigma = Math.exp(lv);
          const reg = inRegion(kind, S, K, T, r, q, sigma);
          if (!reg.ok) return;
          const res = impliedVol({ kind, S, K, T, r, q }, reg.price);
          expect(res.ok).toBe(true);
          if (res.ok) expect(Math.abs(res.iv / sigma - 1)).toBeLessThan(1e-10);
        },
      ),
      { numRuns: 3000 },
    );
  });

  it('far out of the money: prices down to 1e−280 still give the vol', () => {
    // S=100, K=200 (and 50 for puts), T = 1 week, σ = 20%: ln 2/(σ√T) ≈ 25 standard deviations
    for (const [kind, K] of [
      ['call', 200],
      ['put', 50],
    ] as const) {
      const price = bsmValue({ kind, S: 100, K, T: 7 / 365, r: 0.03, q: 0.01, sigma: 0.2 });
      expect(price).toBeLessThan(1e-100);
      expect(price).toBeGreaterThan(1e-280);
      const res = impliedVol({ kind, S: 100, K, T: 7 / 365, r: 0.03, q: 0.01 }, price);
      expect(res.ok && Math.abs(res.iv / 0.2 - 1)).toBeLessThan(1e-10);
    }
  });

  it('very low and very high vols outside the grid still solve (σ = 0.5% and 500%)', () => {
    for (const sigma of [0.005, 5]) {
      const price = bsmValue({ kind: 'call', S: 100, K: 105, T: 1, r: 0.02, q: 0, sigma });
      const res = impliedVol({ kind: 'call', S: 100, K: 105, T: 1, r: 0.02, q: 0 }, price);
      expect(res.ok && Math.abs(res.iv / sigma - 1)).toBeLessThan(1e-10);
    }
  });
});

describe('robustness', () => {
  it('at the money forward with tiny prices (σ√T far below the grid): call ≈ S·σ√T/√(2π)', () => {
    for (const price of [1e-3, 1e-8, 1e-20, 1e-300]) {
      const res = impliedVol({ kind: 'call', S: 100, K: 100, T: 1, r: 0.02, q: 0.02 }, price);
      expect(res.ok).toBe(true);
      // for small σ the at-the-money-forward call is S e^{−qT}(2Φ(σ√T/2) − 1) ≈ S e^{−qT} σ√T/√(2π)
      if (res.ok) expect(Math.abs((res.iv * 100 * Math.exp(-0.02)) / Math.sqrt(2 * Math.PI) / price - 1)).toBeLessThan(1e-6);
    }
  });

  it('any price strictly inside the bounds, for any sensible market, gives a finite vol that reprices it', () => {
    fc.assert(
      fc.property(
        fc.constantFrom<OptionKind>('call', 'put'),
        fc.double({ min: 1e-2, max: 1e5, noNaN: true }),
        fc.double({ min: Math.log(0.2), max: Math.log(5), noNaN: true }),
        fc.double({ min: 1e-5, max: 30, noNaN: true }),
        fc.double({ min: -0.05, max: 0.3, noNaN: true }),
        fc.double({ min: 0, max: 0.2, noNaN: true }),
        fc.double({ min: 0.001, max: 0.999, noNaN: true }),
        (kind, S, lm, T, r, q, u) => {
          const K = S * Math.exp(lm);
          const fS = S * Math.exp(-q * T);
          const fK = K * Math.exp(-r * T);
          const lower = Math.max(kind === 'call' ? fS - fK : fK - fS, 0);
          const upper = kind === 'call' ? fS : fK;
          const price = lower + u * (upper - lower);
          if (!(price > lower && price < upper)) return;
          const res = impliedVol({ kind, S, K, T, r, q }, price);
          expect(res.ok).toBe(true);
          if (!res.ok) return;
          expect(Number.isFinite(res.iv) && res.iv > 0).toBe(true);
          expect(Number.isFinite(res.vega) && res.vega >= 0).toBe(true);
          expect(Math.abs(bsmValue({ kind, S, K, T, r, q, sigma: res.iv }) - price)).toBeLessThan(1e-9 * (fS + fK));
        },
      ),
      { numRuns: 2000 },
    );
  });
});

describe('worked example', () => {
  it('Hull, Options, Futures, and Other Derivatives, implied volatility: call 1.875 with S=21, K=20, r=10%, T=0.25 → 23.5% (from memory)', () => {
    const res = impliedVol({ kind: 'call', S: 21, K: 20, T: 0.25, r: 0.1, q: 0 }, 1.875);
    expect(res.ok).toBe(true);
    if (res.ok) expect(res.iv).toBeCloseTo(0.235, 3);
  });

  it('Haug, The Complete Guide to Option Pricing Formulas, generalized BSM call 2.1334 → σ ≈ 30% (price quoted to 4 decimals; from memory)', () => {
    const res = impliedVol({ kind: 'call', S: 60, K: 65, T: 0.25, r: 0.08, q: 0 }, 2.1334);
    expect(res.ok && Math.abs(res.iv - 0.3)).toBeLessThan(1e-4);
  });
});

describe('no-arbitrage bounds', () => {
  const S = 100;
  const K = 90;
  const T = 0.5;
  const r = 0.05;
  const q = 0.02;
  const fS = S * Math.exp(-q * T);
  const fK = K * Math.exp(-r * T);

  it('a call at or below the discounted intrinsic of the forward: ok:false, lower bound named with its value', () => {
    for (const price of [fS - fK, fS - fK - 0.5, 0, -1]) {
      const res = impliedVol({ kind: 'call', S, K, T, r, q }, price);
      expect(res.ok).toBe(false);
      if (!res.ok) {
        expect(res.bound).toBe('lower');
        expect(res.boundValue).toBeCloseTo(fS - fK, 12);
        expect(res.message).toMatch(/lower bound/);
        expect(res.message).toContain(String(Number((fS - fK).toPrecision(6))));
      }
    }
  });

  it('a call at or above S e^{−qT}: ok:false, upper bound', () => {
    for (const price of [fS, fS + 1, 1000]) {
      const res = impliedVol({ kind: 'call', S, K, T, r, q }, price);
      expect(res.ok).toBe(false);
      if (!res.ok) {
        expect(res.bound).toBe('upper');
        expect(res.boundValue).toBeCloseTo(fS, 12);
        expect(res.message).toMatch(/upper bound/);
      }
    }
  });

  it('a put: lower bound 0 out of the money, upper bound K e^{−rT}', () => {
    const low = impliedVol({ kind: 'put', S, K, T, r, q }, 0);
    expect(!low.ok && low.bound === 'lower' && low.boundValue === 0).toBe(true);
    const high = impliedVol({ kind: 'put', S, K, T, r, q }, fK);
    expect(!high.ok && high.bound === 'upper').toBe(true);
    if (!high.ok) expect(high.boundValue).toBeCloseTo(fK, 12);
    // in the money put: lower bound K e^{−rT} − S e^{−qT}
    const itm = impliedVol({ kind: 'put', S: 80, K: 120, T, r, q }, 1);
    expect(!itm.ok && itm.bound === 'lower').toBe(true);
    if (!itm.ok) expect(itm.boundValue).toBeCloseTo(120 * Math.exp(-r * T) - 80 * Math.exp(-q * T), 12);
  });

  it('just inside the bounds a solution exists and reprices', () => {
    for (const price of [fS - fK + 1e-6, fS - 1e-3]) {
      const res = impliedVol({ kind: 'call', S, K, T, r, q }, price);
      expect(res.ok).toBe(true);
      if (res.ok) {
        expect(Number.isFinite(res.iv) && res.iv > 0).toBe(true);
        expect(Math.abs(bsmValue({ kind: 'call', S, K, T, r, q, sigma: res.iv }) - price)).toBeLessThan(1e-12 * S);
      }
    }
  });

  it('invalid inputs are refused, not crashed on', () => {
    for (const args of [
      [1, 100, 100, 0, 0.05, 0],
      [1, 0, 100, 1, 0.05, 0],
      [NaN, 100, 100, 1, 0.05, 0],
      [1, 100, Infinity, 1, 0.05, 0],
    ]) {
      const [price, s, k, t, rr, qq] = args;
      const res = impliedVol({ kind: 'call', S: s, K: k, T: t, r: rr, q: qq }, price);
      expect(res.ok).toBe(false);
      if (!res.ok) expect(res.message.length).toBeGreaterThan(10);
    }
  });
});
