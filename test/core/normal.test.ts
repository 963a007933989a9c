/**
 * The standard normal distribution (src/core/normal.ts) against published values, independent
 * series computed here, the jstat library where it is accurate, and identities.
 */
import { createRequire } from 'node:module';
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import {
  normCdf,
  normCdfUpper,
  normCdfMinusHalf,
  normCdfWithPdf,
  normInv,
  normMills,
  normPdf,
} from '../../src/core/normal.js';

const require = createRequire(import.meta.url);
const { jStat } = require('jstat') as {
  jStat: { normal: { cdf(x: number, m: number, s: number): number; inv(p: number, m: number, s: number): number } };
};

function relErr(a: number, b: number): number {
  return Math.abs(a - b) / Math.abs(b);
}

/**
 * Independent reference for the central region: the everywhere-convergent series
 * Φ(x) = ½ + φ(x) Σ x^{2n+1} / (1·3·5···(2n+1))  (Abramowitz & Stegun 26.2.11).
 * All terms have the sign of x, so there is no cancellation.
 */
function seriesCdf(x: number): number {
  let term = x;
  let sum = x;
  for (let n = 1; n < 500; n++) {
    term *= (x * x) / (2 * n + 1);
    sum += term;
    if (Math.abs(term) < 1e-18 * Math.abs(sum)) break;
  }
  return 0.5 + (Math.exp(-0.5 * x * x) / Math.sqrt(2 * Math.PI)) * sum;
}

/**
 * Independent reference for the far left tail, x ≥ 10: the asymptotic series
 * 1 − Φ(x) = φ(x)/x · (1 − 1/x² + 1·3/x⁴ − 1·3·5/x⁶ + …)  (Abramowitz & Stegun 26.2.12),
 * summed to its smallest term (the truncation error is below that term, < 1e−20 relative for
 * x ≥ 10). x is chosen so that x²/2 is exact in binary, so Math.exp sees an exact argument.
 */
function asymptoticUpperTail(x: number): number {
  let term = 1;
  let sum = 1;
  for (let n = 1; n < 200; n++) {
    const next = (-term * (2 * n - 1)) / (x * x);
    if (Math.abs(next) >= Math.abs(term)) break;
    term = next;
    sum += term;
  }
  return ((Math.exp(-0.5 * x * x) / Math.sqrt(2 * Math.PI)) * sum) / x;
}

describe('normCdf: published values', () => {
  // Abramowitz & Stegun, Handbook of Mathematical Functions, Table 26.1 (15-digit P(x)),
  // values from memory; each is also checked against the series 26.2.11 below.
  const table: [number, number][] = [
    [0.5, 0.691462461274013],
    [1.0, 0.841344746068543],
    [1.5, 0.933192798731142],
    [2.0, 0.977249868051821],
    [2.5, 0.993790334674224],
    [3.0, 0.99865010196837],
  ];
  it.each(table)('Φ(%f) matches Table 26.1 to 15 digits', (x, p) => {
    expect(Math.abs(normCdf(x) - p)).toBeLessThan(1e-15);
    expect(Math.abs(normCdf(-x) - (1 - p))).toBeLessThan(1e-15);
  });

  it('Φ(−10) = 7.6198530241605e−24 (14 significant digits quoted)', () => {
    expect(relErr(normCdf(-10), 7.6198530241605e-24)).toBeLessThan(1e-13);
  });

  it('Φ(0) = ½ exactly', () => {
    expect(normCdf(0)).toBe(0.5);
  });
});

describe('normCdf: independent series', () => {
  it('central region |z| ≤ 5 agrees with A&S 26.2.11 (1e−14 relative, 5e−16 absolute)', () => {
    // for z < 0 the series is ½ − (positive sum): that subtraction limits the reference itself
    // to about 1e−16 absolute, hence the absolute floor (a few ulps of ½); the tails are checked below
    for (let z = -5; z <= 5; z += 0.0625) {
      const ref = seriesCdf(z);
      expect(Math.abs(normCdf(z) - ref)).toBeLessThan(Math.max(1e-14 * ref, 5e-16));
    }
  });

  it('Φ(z) − ½ keeps full relative precision near 0 (A&S 26.2.11 without the ½)', () => {
    for (const z of [1e-300, 1e-12, -1e-6, 0.001, -0.3, 0.6, -0.674, 0.7, -2, 5]) {
      // the series' own sum: φ(z) Σ z^{2n+1}/(2n+1)!!, no cancellation
      const ref = seriesCdf(z) - 0.5;
      let term = z;
      let sum = z;
      for (let n = 1; n < 300; n++) {
        term *= (z * z) / (2 * n + 1);
        sum += term;
      }
      const exact = (Math.exp(-0.5 * z * z) / Math.sqrt(2 * Math.PI)) * sum;
      expect(relErr(normCdfMinusHalf(z), exact)).toBeLessThan(1e-14);
      expect(Math.abs(ref - exact)).toBeLessThan(1e-16); // the naive subtraction only absolutely
    }
  });

  it('left tail z = −2 … −37 agrees with Laplace\'s continued fraction to 1e−14 relative', () => {
    // Mills ratio Φ(−x)/φ(x) = 1/(x + 1/(x + 2/(x + 3/(x + …)))) (A&S 26.2.14), evaluated
    // backwards from a deep truncation; x = k/64 so x²/2 is exact in binary for Math.exp.
    let worst = 0;
    for (let k = 128; k <= 37 * 64; k++) {
      const x = k / 64;
      let cf = x;
      for (let n = 3000; n >= 1; n--) cf = x + n / cf;
      const ref = Math.exp(-0.5 * x * x) / Math.sqrt(2 * Math.PI) / cf;
      worst = Math.max(worst, relErr(normCdf(-x), ref));
    }
    expect(worst).toBeLessThan(1e-14);
  });

  it('far left tail z = −10 … −37 agrees with A&S 26.2.12 to 1e−14 relative', () => {
    const xs: number[] = [];
    for (let x = 10; x <= 37; x += 0.5) xs.push(x);
    let worst = 0;
    for (const x of xs) {
      const ref = asymptoticUpperTail(x);
      worst = Math.max(worst, relErr(normCdf(-x), ref), relErr(normCdfUpper(x), ref));
    }
    expect(worst).toBeLessThan(1e-14);
    expect(normCdf(-37)).toBeGreaterThan(5.7e-300);
    expect(normCdf(-37)).toBeLessThan(5.74e-300);
  });

  it('the two ranges of the tail (√32 boundary) join without a jump', () => {
    const b = Math.sqrt(32);
    const below = normCdf(-b * (1 - 1e-12));
    const above = normCdf(-b * (1 + 1e-12));
    // true relative change across 2e−12·b is about b²·2e−12 ≈ 6.4e−11
    expect(relErr(below, above)).toBeLessThan(2e-10);
    expect(below).toBeGreaterThan(above);
  });
});

describe('normCdf against jstat (central region, where ½(1+erf) is accurate)', () => {
  it('agrees to 1e−13 absolute for |z| ≤ 4', () => {
    for (let z = -4; z <= 4; z += 0.01) {
      expect(Math.abs(normCdf(z) - jStat.normal.cdf(z, 0, 1))).toBeLessThan(1e-13);
    }
  });
  it('normInv agrees with jstat inv to 1e−9 for p in [0.001, 0.999]', () => {
    for (let p = 0.001; p < 0.999; p += 0.001) {
      expect(Math.abs(normInv(p) - jStat.normal.inv(p, 0, 1))).toBeLessThan(1e-9);
    }
  });
});

describe('identities', () => {
  it('symmetry Φ(z) + Φ(−z) = 1', () => {
    fc.assert(
      fc.property(fc.double({ min: -40, max: 40, noNaN: true }), (z) => {
        expect(Math.abs(normCdf(z) + normCdf(-z) - 1)).toBeLessThan(3e-16);
        expect(normCdfUpper(z)).toBe(normCdf(-z));
      }),
    );
  });

  it('Φ is nondecreasing on a fine grid across all range boundaries', () => {
    let prev = 0;
    for (let z = -39; z <= 9; z += 1 / 1024) {
      const p = normCdf(z);
      expect(p).toBeGreaterThanOrEqual(prev);
      prev = p;
    }
  });

  it('density integrates to 1 and is the derivative of Φ', () => {
    // Simpson's rule on [−40, 40]
    const n = 8000;
    const h = 80 / n;
    let s = normPdf(-40) + normPdf(40);
    for (let i = 1; i < n; i++) s += (i % 2 ? 4 : 2) * normPdf(-40 + i * h);
    expect(Math.abs((s * h) / 3 - 1)).toBeLessThan(1e-12);
    for (let z = -6; z <= 6; z += 0.37) {
      const d = 1e-5;
      const fd = (normCdf(z + d) - normCdf(z - d)) / (2 * d);
      expect(Math.abs(fd - normPdf(z))).toBeLessThan(1e-9);
    }
    expect(relErr(normPdf(30), Math.exp(-450) / Math.sqrt(2 * Math.PI))).toBeLessThan(1e-14);
  });

  it('Φ from a known density and the Mills ratio agree with Φ', () => {
    fc.assert(
      fc.property(fc.double({ min: -38, max: 38, noNaN: true }), (z) => {
        expect(normCdfWithPdf(z, normPdf(z))).toBe(normCdf(z));
        const u = Math.abs(z);
        const viaMills = normMills(u) * normPdf(u);
        const direct = normCdfUpper(u);
        if (direct > 1e-300) expect(relErr(viaMills, direct)).toBeLessThan(1e-14);
      }),
    );
    // Mills ratio where Φ(−u) and φ(u) both underflow: M(u) ~ 1/u − 1/u³ + 3/u⁵ (A&S 26.2.12)
    const u = 100;
    const series = 1 / u - 1 / u ** 3 + 3 / u ** 5 - 15 / u ** 7 + 105 / u ** 9 - 945 / u ** 11;
    expect(relErr(normMills(u), series)).toBeLessThan(1e-14);
  });

  it('edges: ±Infinity, NaN and beyond underflow', () => {
    expect(normCdf(-Infinity)).toBe(0);
    expect(normCdf(Infinity)).toBe(1);
    expect(normCdf(-50)).toBe(0);
    expect(normCdf(50)).toBe(1);
    expect(normPdf(50)).toBe(0);
    expect(Number.isNaN(normCdf(NaN))).toBe(true);
  });
});

describe('normInv', () => {
  it('round trip normInv(Φ(z)) = z for z in [−37, 0] (relative 1e−14)', () => {
    for (let z = -37; z <= -0.01; z += 0.013) {
      expect(relErr(normInv(normCdf(z)), z)).toBeLessThan(1e-14);
    }
  });

  it('round trip on the upper side through the upper tail: normInv(1 − Φ(z)) = −z', () => {
    for (let z = 0.01; z <= 37; z += 0.013) {
      expect(relErr(normInv(normCdfUpper(z)), -z)).toBeLessThan(1e-14);
    }
  });

  it('Φ(normInv(p)) = p in both tails (to a few ulps of z) and the central region', () => {
    fc.assert(
      fc.property(fc.double({ min: 1e-300, max: 0.5, noNaN: true }), (p) => {
        // one ulp of z moves Φ(z) by about z²·1.1e−16 relative: that is the scale of the check
        const z = normInv(p);
        expect(relErr(normCdf(z), p)).toBeLessThan(1e-15 + 4e-16 * z * z);
        // 1 − p is exact for p ≥ ¼ … and loses digits below; compare where it is informative
        if (p > 1e-6) expect(Math.abs(normInv(1 - p) + normInv(p))).toBeLessThan(1e-16 / p);
      }),
    );
    for (const p of [1e-300, 1e-100, 1e-20, 1e-10, 0.01, 0.3, 0.5, 0.7, 0.975]) {
      const z = normInv(p);
      expect(relErr(normCdf(z), p)).toBeLessThan(1e-15 + 4e-16 * z * z);
    }
  });

  it('known quantiles: Φ⁻¹(0.975) = 1.959963984540054 (common practice, from memory)', () => {
    expect(Math.abs(normInv(0.975) - 1.959963984540054)).toBeLessThan(1e-15);
    expect(normInv(0.5)).toBe(0);
  });

  it('edges: 0 → −Infinity, 1 → +Infinity, outside [0,1] → NaN', () => {
    expect(normInv(0)).toBe(-Infinity);
    expect(normInv(1)).toBe(Infinity);
    expect(Number.isNaN(normInv(-0.1))).toBe(true);
    expect(Number.isNaN(normInv(1.5))).toBe(true);
  });
});
