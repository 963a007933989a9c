/**
 * The lower quantile of a cdf with a jump (src/core/numeric/lower-quantile.ts), on the mixture
 * G(y) = 0.3·1{y ≥ 0} + 0.7·Φ(y) (an atom of 0.3 at 0 and 0.7 of a standard normal), whose lower
 * quantile inf{y : G(y) ≥ p} is Φ⁻¹(p/0.7) for p ≤ 0.35, exactly 0 for 0.35 < p ≤ 0.65 and
 * Φ⁻¹((p − 0.3)/0.7) above. Φ and Φ⁻¹ are jstat's (accurate in this central range), so the
 * reference does not use Kolmo's normal functions. Covers the exit taken when the bracket ends on
 * an atom whose left limit is below p (the `jumps` argument), and the solve it replaces.
 */
import { createRequire } from 'node:module';
import { describe, expect, it } from 'vitest';
import { CdfCache, lowerQuantile } from '../../src/core/numeric/lower-quantile.js';

const require = createRequire(import.meta.url);
const { jStat } = require('jstat') as { jStat: { normal: { cdf(x: number, m: number, s: number): number; inv(p: number, m: number, s: number): number } } };

const ATOM = 0.3;
/** the mixture's cdf (jstat's Φ) and the number of evaluations made */
function mixture() {
  const counter = { calls: 0 };
  const G = (y: number): number => {
    counter.calls++;
    return (y >= 0 ? ATOM : 0) + (1 - ATOM) * jStat.normal.cdf(y, 0, 1);
  };
  // as the outcome figures seed it: the outer bracket and the atom level
  const cache = new CdfCache(G);
  cache.at(-12);
  cache.at(12);
  cache.at(0);
  counter.calls = 0;
  return { cache, counter };
}

/** the closed-form lower quantile of the mixture (jstat's Φ⁻¹) */
function expected(p: number): number {
  const left = (1 - ATOM) * 0.5;
  if (p <= left) return jStat.normal.inv(p / (1 - ATOM), 0, 1);
  if (p <= left + ATOM) return 0;
  return jStat.normal.inv((p - ATOM) / (1 - ATOM), 0, 1);
}

const TOL = 1e-12;

describe('lowerQuantile on a cdf with a jump (mixture of an atom and a normal; jstat reference)', () => {
  it('matches the closed form on both continuous parts and inside the jump, with or without jump sizes', () => {
    for (const p of [0.01, 0.1, 0.3, 0.349, 0.351, 0.5, 0.649, 0.66, 0.9, 0.99]) {
      const a = mixture();
      const b = mixture();
      const plain = lowerQuantile(a.cache, p, TOL, [0]);
      const withJumps = lowerQuantile(b.cache, p, TOL, [0], [ATOM]);
      expect(withJumps).toBe(plain);
      if (expected(p) === 0) expect(plain).toBe(0);
      else expect(Math.abs(plain - expected(p))).toBeLessThan(1e-9);
    }
  });

  it('returns the atom at once when the left limit G(0−) = 0.35 is below p (no evaluation), and solves otherwise', () => {
    const inJump = mixture();
    expect(lowerQuantile(inJump.cache, 0.5, TOL, [0], [ATOM])).toBe(0);
    expect(inJump.counter.calls).toBe(0);
    const solved = mixture();
    expect(lowerQuantile(solved.cache, 0.5, TOL, [0])).toBe(0);
    expect(solved.counter.calls).toBeGreaterThan(5);
    // p in the continuous part below the atom: the exit does not apply, the solve runs
    const below = mixture();
    expect(Math.abs(lowerQuantile(below.cache, 0.2, TOL, [0], [ATOM]) - expected(0.2))).toBeLessThan(1e-9);
    expect(below.counter.calls).toBeGreaterThan(5);
  });

  it('does not trust a left limit within the margin of p, nor a jump given as NaN (an atom spread over a range)', () => {
    const left = (1 - ATOM) * 0.5;
    const near = mixture();
    expect(lowerQuantile(near.cache, left + 1e-12, TOL, [0], [ATOM])).toBe(0);
    expect(near.counter.calls).toBeGreaterThan(0);
    const spread = mixture();
    expect(lowerQuantile(spread.cache, 0.5, TOL, [0], [Number.NaN])).toBe(0);
    expect(spread.counter.calls).toBeGreaterThan(0);
  });
});
