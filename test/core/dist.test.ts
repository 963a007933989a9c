/**
 * Spot at a horizon under a walk (src/core/dist.ts), checked against the jstat library (lognormal
 * and Poisson, away from the far tails where its erf-based cdf loses precision), independent
 * numerical integration written here, and identities of the lognormal and of compound Poisson
 * sums.
 */
import { createRequire } from 'node:module';
import { describe, expect, it } from 'vitest';
import {
  cdf,
  density,
  mean,
  partialExpectation,
  prob,
  quantile,
  sf,
  walkDistribution,
  type SpotDist,
} from '../../src/core/dist.js';
import { integrate as glIntegrate } from '../support/quadrature.js';

// jstat ships no types: load it through require and type the few functions used here
const require = createRequire(import.meta.url);
const { jStat } = require('jstat') as {
  jStat: {
    lognormal: { pdf(x: number, mu: number, s: number): number; cdf(x: number, mu: number, s: number): number; inv(p: number, mu: number, s: number): number };
    poisson: { pdf(k: number, l: number): number };
  };
};

/** ∫ g(y) dy over [a, b] in n panels of 20-point Gauss-Legendre. */
function integrate(g: (y: number) => number, a: number, b: number, n = 400): number {
  return glIntegrate(g, a, b, n);
}

/** ∫ g(S) f(S) dS over S in (e^ya, e^yb], integrating in y = ln S. */
function expectLog(d: SpotDist, g: (s: number) => number, ya: number, yb: number): number {
  return integrate((y) => {
    const s = Math.exp(y);
    return g(s) * density(d, s) * s;
  }, ya, yb);
}

const cases = [
  { name: 'plain', spot: 100, h: 0.5, q: 0.01, walk: { drift: 0.08, vol: 0.25 } },
  { name: 'jumps', spot: 84.2, h: 1.25, q: 0.012, walk: { drift: 0.06, vol: 0.2, jumps: { intensity: 1.5, mean: -0.08, sd: 0.12 } } },
  { name: 'many jumps', spot: 50, h: 2, q: 0, walk: { drift: 0.03, vol: 0.15, jumps: { intensity: 12, mean: 0.02, sd: 0.05 } } },
  { name: 'up jumps, short horizon', spot: 20, h: 0.02, q: 0.03, walk: { drift: 0.1, vol: 0.4, jumps: { intensity: 3, mean: 0.15, sd: 0.3 } } },
];

describe('walkDistribution', () => {
  for (const c of cases) {
    const d = walkDistribution(c.spot, c.h, c.q, c.walk);
    const ya = Math.log(c.spot) - 12;
    const yb = Math.log(c.spot) + 12;

    it(`${c.name}: weights sum to 1 and the density integrates to 1 (identity)`, () => {
      const wsum = d.components.reduce((a, x) => a + x.weight, 0);
      expect(Math.abs(wsum - 1)).toBeLessThan(1e-14);
      expect(Math.abs(expectLog(d, () => 1, ya, yb) - 1)).toBeLessThan(1e-10);
    });

    it(`${c.name}: E[S_h] = S e^{(μ−q)h} (lognormal mean; jumps compensated, Merton 1976)`, () => {
      const want = c.spot * Math.exp((c.walk.drift - c.q) * c.h);
      expect(Math.abs(mean(d) / want - 1)).toBeLessThan(1e-13);
      expect(Math.abs(expectLog(d, (s) => s, ya, yb) / want - 1)).toBeLessThan(1e-10);
      expect(Math.abs(partialExpectation(d, 0, Infinity) / want - 1)).toBeLessThan(1e-13);
    });

    it(`${c.name}: prob and partialExpectation match numerical integrals`, () => {
      const a = c.spot * 0.93;
      const b = c.spot * 1.11;
      const pNum = expectLog(d, () => 1, Math.log(a), Math.log(b));
      const eNum = expectLog(d, (s) => s, Math.log(a), Math.log(b));
      expect(Math.abs(prob(d, a, b) - pNum)).toBeLessThan(1e-12);
      expect(Math.abs(partialExpectation(d, a, b) - eNum)).toBeLessThan(1e-10 * c.spot);
      expect(Math.abs(cdf(d, b) - cdf(d, a) - prob(d, a, b))).toBeLessThan(1e-14);
      expect(Math.abs(cdf(d, a) + sf(d, a) - 1)).toBeLessThan(1e-14);
    });

    it(`${c.name}: quantile inverts the cdf`, () => {
      for (const p of [1e-12, 0.005, 0.05, 0.25, 0.5, 0.75, 0.95, 0.995, 1 - 1e-10]) {
        const x = quantile(d, p);
        expect(x).toBeGreaterThan(0);
        expect(Math.abs(cdf(d, x) - p)).toBeLessThan(1e-13 + 1e-10 * p);
      }
    });
  }

  it('log jump count mixture: Var[ln S_h] = σ²h + λh(m² + δ²) (compound Poisson variance)', () => {
    const c = cases[1];
    const j = c.walk.jumps!;
    const d = walkDistribution(c.spot, c.h, c.q, c.walk);
    const m1 = d.components.reduce((a, x) => a + x.weight * x.mu, 0);
    const m2 = d.components.reduce((a, x) => a + x.weight * (x.mu * x.mu + x.s * x.s), 0);
    const want = c.walk.vol ** 2 * c.h + j.intensity * c.h * (j.mean ** 2 + j.sd ** 2);
    expect(Math.abs(m2 - m1 * m1 - want)).toBeLessThan(1e-12);
  });

  it('jump weights are Poisson probabilities (jstat poisson pdf)', () => {
    const c = cases[2];
    const d = walkDistribution(c.spot, c.h, c.q, c.walk);
    const lh = c.walk.jumps!.intensity * c.h;
    // components are in increasing jump count; the first kept one has the smallest mean shift
    const base = d.components[0];
    for (const comp of d.components) {
      const n = Math.round((comp.mu - base.mu) / c.walk.jumps!.mean) + 0;
      const nAbs = n + Math.round((base.s * base.s - c.walk.vol ** 2 * c.h) / c.walk.jumps!.sd ** 2);
      const want = jStat.poisson.pdf(nAbs, lh);
      if (want > 1e-10) expect(Math.abs(comp.weight / want - 1)).toBeLessThan(1e-9);
    }
    // the series is cut only where the remaining Poisson weight is negligible
    const kept = d.components.reduce((a, x) => a + x.weight, 0);
    expect(Math.abs(kept - 1)).toBeLessThan(1e-14);
  });

  it('zero jump intensity equals the lognormal', () => {
    const a = walkDistribution(100, 0.7, 0.01, { drift: 0.05, vol: 0.3 });
    const b = walkDistribution(100, 0.7, 0.01, { drift: 0.05, vol: 0.3, jumps: { intensity: 0, mean: -0.1, sd: 0.2 } });
    expect(b.components).toEqual(a.components);
  });

  it('single component against jstat lognormal pdf/cdf/inv (central range)', () => {
    const spot = 100;
    const h = 0.75;
    const q = 0.015;
    const walk = { drift: 0.07, vol: 0.32 };
    const d = walkDistribution(spot, h, q, walk);
    const mu = Math.log(spot) + (walk.drift - q - 0.5 * walk.vol ** 2) * h;
    const s = walk.vol * Math.sqrt(h);
    for (const x of [45, 70, 88, 100, 104.5, 130, 180, 260]) {
      expect(Math.abs(density(d, x) / jStat.lognormal.pdf(x, mu, s) - 1)).toBeLessThan(1e-12);
      expect(Math.abs(cdf(d, x) - jStat.lognormal.cdf(x, mu, s))).toBeLessThan(1e-13);
    }
    for (const p of [0.001, 0.05, 0.3, 0.5, 0.8, 0.99]) {
      expect(Math.abs(quantile(d, p) / jStat.lognormal.inv(p, mu, s) - 1)).toBeLessThan(1e-9);
    }
  });

  it('far tails keep full relative precision: Φ(−10) = 7.619853024160527e-24 (from memory; standard normal tables)', () => {
    const d = walkDistribution(100, 1, 0, { drift: 0.05, vol: 0.2 });
    const c = d.components[0];
    const lo = Math.exp(c.mu - 10 * c.s);
    const hi = Math.exp(c.mu + 10 * c.s);
    expect(Math.abs(cdf(d, lo) / 7.619853024160527e-24 - 1)).toBeLessThan(1e-12);
    expect(Math.abs(sf(d, hi) / 7.619853024160527e-24 - 1)).toBeLessThan(1e-12);
    expect(Math.abs(prob(d, hi, Infinity) / 7.619853024160527e-24 - 1)).toBeLessThan(1e-12);
  });

  it('degenerate walks (h = 0, σ = 0) are point masses without NaN', () => {
    for (const d of [
      walkDistribution(100, 0, 0.01, { drift: 0.05, vol: 0.3 }),
      walkDistribution(100, 0.5, 0.01, { drift: 0.05, vol: 0 }),
    ]) {
      const x0 = Math.exp(d.components[0].mu);
      expect(cdf(d, x0 * 0.999)).toBe(0);
      expect(cdf(d, x0)).toBe(1);
      expect(density(d, x0)).toBe(0);
      expect(quantile(d, 0.3)).toBeCloseTo(x0, 10);
      expect(prob(d, x0 * 0.9, x0 * 1.1)).toBe(1);
      expect(partialExpectation(d, x0 * 0.9, x0 * 1.1)).toBeCloseTo(x0, 10);
    }
    const d0 = walkDistribution(100, 0.5, 0.01, { drift: 0.05, vol: 0 });
    expect(mean(d0)).toBeCloseTo(100 * Math.exp(0.04 * 0.5), 10);
    // σ = 0 with jumps: the no-jump component is a point mass, the rest are continuous
    const dj = walkDistribution(100, 0.5, 0, { drift: 0.05, vol: 0, jumps: { intensity: 2, mean: -0.1, sd: 0.1 } });
    expect(Math.abs(mean(dj) / (100 * Math.exp(0.025)) - 1)).toBeLessThan(1e-13);
    for (const p of [0.01, 0.2, 0.5, 0.9]) {
      const x = quantile(dj, p);
      expect(Number.isFinite(x)).toBe(true);
      expect(cdf(dj, x)).toBeGreaterThanOrEqual(p - 1e-12);
      expect(cdf(dj, x * (1 - 1e-9))).toBeLessThan(p + 1e-12);
    }
  });
});
