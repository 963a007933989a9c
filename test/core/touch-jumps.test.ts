import { describe, it, expect } from 'vitest';
import { touchProbJumps, Xoshiro128 } from '../../src/core/touch-jumps.js';
import { normCdf } from '../../src/core/normal.js';
import type { Jumps } from '../../src/core/types.js';

/**
 * First-passage probability of ln S to b = ln(H/S) by T for a Brownian motion with drift
 * ν = drift − q − σ²/2 (reflection principle with drift, written out here independently of
 * src/core/touch.ts): for b > 0, Φ((−b+νT)/(σ√T)) + e^{2νb/σ²} Φ((−b−νT)/(σ√T)); a level below
 * the spot by symmetry (b → −b, ν → −ν).
 */
function closedTouch(S: number, H: number, T: number, drift: number, q: number, sigma: number): number {
  let b = Math.log(H / S);
  let nu = drift - q - 0.5 * sigma * sigma;
  if (b < 0) {
    b = -b;
    nu = -nu;
  }
  const sd = sigma * Math.sqrt(T);
  return normCdf((-b + nu * T) / sd) + Math.exp((2 * nu * b) / (sigma * sigma)) * normCdf((-b - nu * T) / sd);
}

/** P(S_T beyond H) under a Poisson(λT) mixture of lognormals (compensated drift), by series. */
function mixtureBeyond(S: number, H: number, T: number, drift: number, q: number, sigma: number, j: Jumps): number {
  const kappa = Math.exp(j.mean + 0.5 * j.sd * j.sd) - 1;
  const lam = j.intensity * T;
  let p = 0;
  let w = Math.exp(-lam);
  for (let n = 0; n < 200; n++) {
    if (n > 0) w *= lam / n;
    const mu = (drift - q - j.intensity * kappa - 0.5 * sigma * sigma) * T + n * j.mean;
    const s = Math.sqrt(sigma * sigma * T + n * j.sd * j.sd);
    const b = Math.log(H / S);
    p += w * (H >= S ? normCdf((mu - b) / s) : normCdf((b - mu) / s));
  }
  return p;
}

describe('Xoshiro128', () => {
  it('is reproducible and its uniforms look uniform (mean ½, variance 1/12)', () => {
    const a = new Xoshiro128(42);
    const b = new Xoshiro128(42);
    for (let i = 0; i < 100; i++) expect(a.nextU32()).toBe(b.nextU32());
    const r = new Xoshiro128(7);
    let s = 0;
    let s2 = 0;
    const n = 200000;
    let outside = 0;
    for (let i = 0; i < n; i++) {
      const u = r.uniform();
      if (!(u > 0 && u < 1)) outside++;
      s += u;
      s2 += u * u;
    }
    expect(outside).toBe(0);
    const mean = s / n;
    expect(Math.abs(mean - 0.5)).toBeLessThan(4 * Math.sqrt(1 / 12 / n));
    expect(Math.abs(s2 / n - mean * mean - 1 / 12)).toBeLessThan(0.002);
    let z2 = 0;
    for (let i = 0; i < n; i++) z2 += r.normal() ** 2;
    expect(Math.abs(z2 / n - 1)).toBeLessThan(4 * Math.sqrt(2 / n));
  });
});

describe('touchProbJumps', () => {
  const cases: [number, number, number, number, number, number][] = [
    [100, 120, 0.5, 0.08, 0.01, 0.25],
    [100, 85, 1, 0.05, 0, 0.3],
    [100, 101, 0.1, 0, 0, 0.2],
    [50, 80, 2, 0.12, 0.02, 0.4],
  ];
  for (const steps of [1, 12]) {
    it(`without jumps agrees with the closed-form first passage within 4 standard errors (${steps} steps)`, () => {
      for (const [S, H, T, mu, q, s] of cases) {
        const r = touchProbJumps({ S, level: H, T, drift: mu, q, sigma: s }, undefined, { paths: 20000, steps, seed: 11 });
        const exact = closedTouch(S, H, T, mu, q, s);
        expect(r.stderr).toBeGreaterThan(0);
        expect(Math.abs(r.prob - exact), `${S}→${H}: ${r.prob} vs ${exact} ± ${r.stderr}`).toBeLessThan(4 * r.stderr);
        const nu = mu - q - 0.5 * s * s;
        const b = Math.log(H / S);
        const end = H >= S ? normCdf((nu * T - b) / (s * Math.sqrt(T))) : normCdf((b - nu * T) / (s * Math.sqrt(T)));
        expect(Math.abs(r.probBeyond - end)).toBeLessThan(4 * r.probBeyondStderr);
        expect(r.prob).toBeGreaterThanOrEqual(r.probBeyond);
      }
    });
  }

  it('with jumps ends beyond the level as often as the compensated Poisson mixture says', () => {
    for (const j of [
      { intensity: 2, mean: -0.05, sd: 0.1 },
      { intensity: 0.5, mean: 0.15, sd: 0.2 },
    ] as Jumps[]) {
      for (const H of [120, 85]) {
        const r = touchProbJumps({ S: 100, level: H, T: 0.75, drift: 0.07, q: 0.01, sigma: 0.2 }, j, { paths: 30000, seed: 5 });
        const exact = mixtureBeyond(100, H, 0.75, 0.07, 0.01, 0.2, j);
        expect(Math.abs(r.probBeyond - exact), `H=${H}`).toBeLessThan(4 * r.probBeyondStderr);
        expect(r.prob).toBeGreaterThanOrEqual(r.probBeyond);
      }
    }
  });

  it('with jumps agrees with a brute-force fine-step simulation (continuity-corrected level)', () => {
    // Independent estimate: 800 monitoring dates, direct checks only, with the level shifted
    // towards the spot by β·σ·√Δt, β = −ζ(½)/√(2π) ≈ 0.5826, which turns discrete monitoring into
    // continuous (Broadie, Glasserman and Kou, Mathematical Finance 7, 1997).
    const [S, H, T, mu, q, s] = [100, 115, 0.5, 0.06, 0.0, 0.2];
    const j: Jumps = { intensity: 3, mean: -0.04, sd: 0.08 };
    const m = 800;
    const dt = T / m;
    const kappa = Math.exp(j.mean + 0.5 * j.sd * j.sd) - 1;
    const nu = mu - q - 0.5 * s * s - j.intensity * kappa;
    const bShift = Math.log(H / S) - 0.5826 * s * Math.sqrt(dt);
    const rng = new Xoshiro128(99);
    const n = 6000;
    let hits = 0;
    const pJump = j.intensity * dt; // at most one jump per step (λΔt ≈ 0.002; two have chance 2e-6)
    for (let p = 0; p < n; p++) {
      let x = 0;
      for (let k = 0; k < m; k++) {
        x += nu * dt + s * Math.sqrt(dt) * rng.normal();
        if (rng.uniform() < pJump) x += j.mean + j.sd * rng.normal();
        if (x >= bShift) {
          hits++;
          break;
        }
      }
    }
    const brute = hits / n;
    const bruteErr = Math.sqrt((brute * (1 - brute)) / n);
    const r = touchProbJumps({ S, level: H, T, drift: mu, q, sigma: s }, j, { paths: 20000, seed: 3 });
    const tol = 4 * Math.hypot(bruteErr, r.stderr) + 0.005; // + allowance for the O(Δt) residue
    console.log(`touch with jumps: bridge MC ${r.prob.toFixed(4)} ± ${r.stderr.toFixed(4)}, brute force ${brute.toFixed(4)} ± ${bruteErr.toFixed(4)}, no jumps ${closedTouch(S, H, T, mu, q, s).toFixed(4)}`);
    expect(Math.abs(r.prob - brute), `${r.prob} vs ${brute}`).toBeLessThan(tol);
    // and jumps matter here: the no-jump answer is clearly different
    expect(Math.abs(r.prob - closedTouch(S, H, T, mu, q, s))).toBeGreaterThan(0.01);
  });

  it('is reproducible: the same seed gives the same answer, another seed a different one', () => {
    const j: Jumps = { intensity: 1, mean: -0.1, sd: 0.1 };
    const a = touchProbJumps({ S: 100, level: 110, T: 1, drift: 0.05, q: 0, sigma: 0.2 }, j, { paths: 3000, seed: 17 });
    const b = touchProbJumps({ S: 100, level: 110, T: 1, drift: 0.05, q: 0, sigma: 0.2 }, j, { paths: 3000, seed: 17 });
    const c = touchProbJumps({ S: 100, level: 110, T: 1, drift: 0.05, q: 0, sigma: 0.2 }, j, { paths: 3000, seed: 18 });
    expect(a).toEqual(b);
    expect(c.prob).not.toBe(a.prob);
  });

  it('handles the edges: level at the spot, T = 0, bad input', () => {
    const at = touchProbJumps({ S: 100, level: 100, T: 1, drift: 0.05, q: 0, sigma: 0.2 }, undefined, { paths: 1000 });
    expect(at.prob).toBe(1);
    expect(at.stderr).toBe(0);
    expect(touchProbJumps({ S: 100, level: 120, T: 0, drift: 0.05, q: 0, sigma: 0.2 }, undefined)).toMatchObject({ prob: 0, probBeyond: 0 });
    expect(() => touchProbJumps({ S: 100, level: -5, T: 1, drift: 0.05, q: 0, sigma: 0.2 }, undefined)).toThrow(/level/);
    expect(() => touchProbJumps({ S: 100, level: 120, T: 1, drift: 0.05, q: 0, sigma: 0.2 }, { intensity: -1, mean: 0, sd: 0 })).toThrow(/jumps/);
  });
});
