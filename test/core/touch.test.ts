/**
 * Touch probabilities (src/core/touch.ts) against the reflection principle, a seeded Monte Carlo
 * with an exact Brownian-bridge crossing correction, the lognormal law (jstat) and limits.
 */
import { createRequire } from 'node:module';
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { probBeyondAtEnd, touchProb } from '../../src/core/touch.js';
import { mulberry32 as rng } from '../support/rng.js';

const require = createRequire(import.meta.url);
const { jStat } = require('jstat') as {
  jStat: { lognormal: { cdf(x: number, mu: number, s: number): number } };
};


/**
 * Monte Carlo of P(touch) for the log-spot X (drift ν, vol σ) with `steps` steps per path.
 * Within a step whose two ends are both short of the barrier, a Brownian bridge crosses it with
 * probability exp(−2(b − x₀)(b − x₁)/(σ²Δt)) (the bridge does not depend on the drift), so the
 * per-path estimate 1 − Π(1 − p_i) is unbiased for any step size; we still use fine steps.
 */
function monteCarloTouch(S: number, level: number, T: number, drift: number, q: number, sigma: number, paths: number, steps: number, seed: number) {
  const u = rng(seed);
  const up = level > S;
  const b = Math.abs(Math.log(level / S));
  const nu = (up ? 1 : -1) * (drift - q - 0.5 * sigma * sigma); // drift towards the level
  const dt = T / steps;
  const sdt = sigma * Math.sqrt(dt);
  const k = 2 / (sigma * sigma * dt);
  let sum = 0;
  let sum2 = 0;
  for (let p = 0; p < paths; p++) {
    let x = 0;
    let survive = 1;
    for (let i = 0; i < steps; i++) {
      // Box-Muller
      const z = Math.sqrt(-2 * Math.log(1 - u())) * Math.cos(2 * Math.PI * u());
      const x1 = x + nu * dt + sdt * z;
      if (x1 >= b) {
        survive = 0;
        break;
      }
      survive *= 1 - Math.exp(-k * (b - x) * (b - x1));
      x = x1;
    }
    const est = 1 - survive;
    sum += est;
    sum2 += est * est;
  }
  const mean = sum / paths;
  const se = Math.sqrt((sum2 / paths - mean * mean) / (paths - 1));
  return { mean, se };
}

describe('reflection principle', () => {
  it('zero log-drift (drift = q + σ²/2): P(touch) = 2·P(end beyond), both directions', () => {
    fc.assert(
      fc.property(
        fc.double({ min: 0.3, max: 3, noNaN: true }),
        fc.double({ min: 1 / 365, max: 5, noNaN: true }),
        fc.double({ min: 0.05, max: 1.5, noNaN: true }),
        fc.double({ min: 0, max: 0.08, noNaN: true }),
        (m, T, sigma, q) => {
          const drift = q + 0.5 * sigma * sigma;
          const t = touchProb({ S: 100, level: 100 * m, T, drift, q, sigma });
          const e = probBeyondAtEnd({ S: 100, level: 100 * m, T, drift, q, sigma });
          expect(Math.abs(t - 2 * e)).toBeLessThan(1e-13);
        },
      ),
    );
  });

  it('a path ending beyond the level has touched it: P(touch) ≥ P(end beyond)', () => {
    fc.assert(
      fc.property(
        fc.double({ min: 0.3, max: 3, noNaN: true }),
        fc.double({ min: 1 / 365, max: 5, noNaN: true }),
        fc.double({ min: 0.05, max: 1.5, noNaN: true }),
        fc.double({ min: -0.5, max: 0.5, noNaN: true }),
        (m, T, sigma, drift) => {
          expect(touchProb({ S: 100, level: 100 * m, T, drift, q: 0.01, sigma })).toBeGreaterThanOrEqual(
            probBeyondAtEnd({ S: 100, level: 100 * m, T, drift, q: 0.01, sigma }) - 1e-15,
          );
        },
      ),
    );
  });
});

describe('against a seeded Monte Carlo with Brownian-bridge crossing', () => {
  const cases: [string, number, number, number, number, number, number][] = [
    ['up, drift towards', 100, 120, 0.5, 0.08, 0.01, 0.25],
    ['down, drift away', 100, 85, 1, 0.1, 0, 0.3],
    ['up, strong drift away, high vol', 100, 110, 0.25, -0.2, 0.02, 0.5],
    ['down, drift towards, long', 100, 70, 3, -0.05, 0.03, 0.2],
  ];
  it.each(cases)('%s: within 4 standard errors', (_name, S, L, T, mu, q, sigma) => {
    const mc = monteCarloTouch(S, L, T, mu, q, sigma, 20000, 100, 20261201);
    const exact = touchProb({ S, level: L, T, drift: mu, q, sigma });
    expect(mc.se).toBeLessThan(0.005);
    expect(Math.abs(mc.mean - exact)).toBeLessThan(4 * mc.se);
  });
});

describe('probability of ending beyond', () => {
  it('matches the lognormal law (jstat lognormal cdf) above and below', () => {
    fc.assert(
      fc.property(
        fc.double({ min: 0.3, max: 3, noNaN: true }),
        fc.double({ min: 1 / 365, max: 5, noNaN: true }),
        fc.double({ min: 0.05, max: 1.5, noNaN: true }),
        fc.double({ min: -0.3, max: 0.4, noNaN: true }),
        (m, T, sigma, mu) => {
          const L = 100 * m;
          const mean = Math.log(100) + (mu - 0.02 - 0.5 * sigma * sigma) * T;
          const below = jStat.lognormal.cdf(L, mean, sigma * Math.sqrt(T));
          const p = probBeyondAtEnd({ S: 100, level: L, T, drift: mu, q: 0.02, sigma });
          expect(Math.abs(p - (L >= 100 ? 1 - below : below))).toBeLessThan(1e-12);
        },
      ),
    );
  });
});

describe('shape and limits', () => {
  it('nondecreasing in T', () => {
    for (const [L, mu] of [
      [120, 0.1],
      [120, -0.3],
      [80, 0.2],
      [80, -0.1],
    ]) {
      let prev = 0;
      for (let T = 0.001; T < 20; T *= 1.1) {
        const p = touchProb({ S: 100, level: L, T, drift: mu, q: 0.01, sigma: 0.3 });
        expect(p).toBeGreaterThanOrEqual(prev - 1e-15);
        prev = p;
      }
    }
  });

  it('T → 0: 0 for a level away from the spot, 1 at the spot', () => {
    expect(touchProb({ S: 100, level: 101, T: 1e-10, drift: 0.05, q: 0, sigma: 0.3 })).toBeLessThan(1e-12);
    expect(touchProb({ S: 100, level: 99, T: 1e-10, drift: 0.05, q: 0, sigma: 0.3 })).toBeLessThan(1e-12);
    expect(touchProb({ S: 100, level: 101, T: 0, drift: 0.05, q: 0, sigma: 0.3 })).toBe(0);
    expect(touchProb({ S: 100, level: 100, T: 0, drift: 0.05, q: 0, sigma: 0.3 })).toBe(1);
    expect(touchProb({ S: 100, level: 100, T: 1, drift: 0.05, q: 0, sigma: 0.3 })).toBe(1);
    expect(probBeyondAtEnd({ S: 100, level: 101, T: 0, drift: 0.05, q: 0, sigma: 0.3 })).toBe(0);
  });

  it('T → ∞: drift away gives e^{−2|ν|a/σ²} (a Brownian motion with drift −|ν| ever rising by a; common practice), drift towards gives 1', () => {
    const sigma = 0.3;
    const mu = 0.01; // ν = 0.01 − 0.045 < 0: away from a level above
    const nu = mu - 0.5 * sigma * sigma;
    const a = Math.log(1.3);
    const limit = Math.exp((2 * nu * a) / (sigma * sigma));
    expect(Math.abs(touchProb({ S: 100, level: 130, T: 1e5, drift: mu, q: 0, sigma }) - limit)).toBeLessThan(1e-12);
    expect(touchProb({ S: 100, level: 130, T: 1e5, drift: 0.2, q: 0, sigma })).toBeCloseTo(1, 12);
  });

  it('σ → 0: the certain path e^{(μ−q)t} touches when it gets there', () => {
    // 100 e^{0.2} ≈ 122.1
    expect(touchProb({ S: 100, level: 120, T: 1, drift: 0.2, q: 0, sigma: 0 })).toBe(1);
    expect(touchProb({ S: 100, level: 125, T: 1, drift: 0.2, q: 0, sigma: 0 })).toBe(0);
    expect(touchProb({ S: 100, level: 80, T: 1, drift: 0.2, q: 0, sigma: 0 })).toBe(0);
    expect(touchProb({ S: 100, level: 120, T: 1, drift: 0.2, q: 0, sigma: 1e-6 })).toBeCloseTo(1, 10);
    expect(touchProb({ S: 100, level: 125, T: 1, drift: 0.2, q: 0, sigma: 1e-6 })).toBeLessThan(1e-10);
    expect(probBeyondAtEnd({ S: 100, level: 120, T: 1, drift: 0.2, q: 0, sigma: 0 })).toBe(1);
  });

  it('never NaN or Infinity for extreme but finite inputs', () => {
    for (const L of [1e-300, 1e-5, 50, 99.999, 100, 100.001, 200, 1e300])
      for (const T of [0, 1e-12, 1 / 365, 1, 1e4])
        for (const mu of [-5, -0.1, 0, 0.1, 5])
          for (const sigma of [0, 1e-12, 0.001, 0.3, 10]) {
            const t = touchProb({ S: 100, level: L, T, drift: mu, q: 0.02, sigma });
            const e = probBeyondAtEnd({ S: 100, level: L, T, drift: mu, q: 0.02, sigma });
            expect(t >= 0 && t <= 1, `touch L=${L} T=${T} μ=${mu} σ=${sigma}: ${t}`).toBe(true);
            expect(e >= 0 && e <= 1, `beyond L=${L} T=${T} μ=${mu} σ=${sigma}: ${e}`).toBe(true);
          }
  });
});
