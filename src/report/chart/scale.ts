/** Small numeric helpers of the charts (display only: ranges, ticks, areas, quantiles, thinning). */
import { bracket } from '../../core/numeric/sorted.js';
import { isNum } from '../format.js';

// ---------------------------------------------------------------------------------------------
// Small numeric helpers (display only: ranges, ticks, thinning).

/** A "nice" step (1, 2, 2.5 or 5 × 10^k) near `raw`. */
export function niceStep(raw: number): number {
  if (!(raw > 0) || !Number.isFinite(raw)) return 1;
  const exp = Math.floor(Math.log10(raw));
  const base = Math.pow(10, exp);
  const f = raw / base;
  const m = f <= 1 ? 1 : f <= 2 ? 2 : f <= 2.5 ? 2.5 : f <= 5 ? 5 : 10;
  return m * base;
}

/**
 * Rounded axis bounds and step holding [lo, hi] with at most `maxSpaces` steps
 * (min and max are whole multiples of the step).
 */
export function niceRange(lo: number, hi: number, maxSpaces = 8): { min: number; max: number; step: number } {
  if (!isNum(lo) || !isNum(hi)) return { min: 0, max: 1, step: 0.25 };
  if (hi < lo) [lo, hi] = [hi, lo];
  if (hi - lo <= Math.max(Math.abs(lo), Math.abs(hi)) * 1e-9) {
    const pad = Math.max(Math.abs(lo) * 0.05, 1);
    lo -= pad;
    hi += pad;
  }
  let step = niceStep((hi - lo) / maxSpaces);
  for (let k = 0; k < 8; k++) {
    const min = Math.floor(lo / step + 1e-9) * step;
    const max = Math.ceil(hi / step - 1e-9) * step;
    if (Math.round((max - min) / step) <= maxSpaces) return { min: roundTo(min, step), max: roundTo(max, step), step };
    step = niceStep(step * 1.01);
  }
  const min = Math.floor(lo / step) * step;
  return { min: roundTo(min, step), max: roundTo(Math.ceil(hi / step) * step, step), step };
}

export function decimalsOf(step: number): number {
  if (!(step > 0)) return 0;
  for (let d = 0; d <= 15; d++) {
    const v = step * 10 ** d;
    if (Math.round(v) > 0 && Math.abs(Math.round(v) - v) < 1e-9 * v) return d;
  }
  return 15;
}

/** Intl options for tick labels: exactly as many decimals as the step needs, grouped thousands. */
export function tickFormat(step: number): Intl.NumberFormatOptions {
  const d = Math.min(decimalsOf(step), 15);
  return { minimumFractionDigits: d, maximumFractionDigits: d };
}

export function roundTo(v: number, step: number): number {
  const f = 10 ** decimalsOf(step);
  const r = Math.round(v * f) / f;
  return r === 0 ? 0 : r; // no −0
}

/** Trapezoid area under (x, y). */
export function trapezoid(x: readonly number[], y: readonly number[]): number {
  let s = 0;
  for (let i = 1; i < Math.min(x.length, y.length); i++) s += 0.5 * (y[i] + y[i - 1]) * (x[i] - x[i - 1]);
  return s;
}

/**
 * Lower quantiles inf{x : F(x) ≥ p} of a sampled density (piecewise linear between samples)
 * plus point masses, the whole normalised to total mass 1. Display use only: it places the x
 * range, it is never reported as a figure.
 */
export function sampledQuantiles(
  x: readonly number[],
  density: readonly number[],
  ps: readonly number[],
  atoms: readonly { x: number; prob: number }[] = [],
): number[] {
  const n = Math.min(x.length, density.length);
  // Events: each grid interval's mass (placed uniformly over it) and each atom.
  const cum: number[] = [0];
  for (let i = 1; i < n; i++) cum.push(cum[i - 1] + Math.max(0, 0.5 * (density[i] + density[i - 1]) * (x[i] - x[i - 1])));
  const atomsSorted = atoms.filter((a) => isNum(a.x) && isNum(a.prob) && a.prob > 0).sort((a, b) => a.x - b.x);
  const total = (n > 0 ? cum[n - 1] : 0) + atomsSorted.reduce((s, a) => s + a.prob, 0);
  if (!(total > 0)) return ps.map(() => NaN);
  // F at a point: continuous mass below it plus atoms at or below it.
  const contBelow = (v: number): number => {
    if (n === 0 || v <= x[0]) return 0;
    if (v >= x[n - 1]) return cum[n - 1];
    const lo = bracket(x, v, n);
    const hi = lo + 1;
    const w = x[hi] - x[lo];
    const t = w > 0 ? (v - x[lo]) / w : 1;
    return cum[lo] + t * (cum[hi] - cum[lo]);
  };
  const F = (v: number): number => {
    let s = contBelow(v);
    for (const a of atomsSorted) if (a.x <= v) s += a.prob;
    return s / total;
  };
  // Candidate points: grid points and atoms; bisect inside the bracketing interval.
  const pts = [...x.slice(0, n), ...atomsSorted.map((a) => a.x)].sort((a, b) => a - b);
  return ps.map((p) => {
    for (let j = 0; j < pts.length; j++) {
      if (F(pts[j]) >= p - 1e-12) {
        if (j === 0) return pts[0];
        let lo = pts[j - 1];
        let hi = pts[j];
        for (let k = 0; k < 50 && hi - lo > 1e-12 * Math.max(1, Math.abs(hi)); k++) {
          const mid = 0.5 * (lo + hi);
          if (F(mid) >= p - 1e-12) hi = mid;
          else lo = mid;
        }
        return hi;
      }
    }
    return pts[pts.length - 1];
  });
}

/**
 * Indices to keep so that at most ~`max` points remain: every k-th, the first and last, the
 * samples either side of each `keepNear` value, and each local extreme and kink of `ys`.
 */
export function thinIndices(xs: readonly number[], ys: readonly number[][], max: number, keepNear: readonly number[]): number[] {
  const n = xs.length;
  if (n <= max) return Array.from({ length: n }, (_, i) => i);
  const keep = new Set<number>([0, n - 1]);
  const k = Math.ceil(n / max);
  for (let i = 0; i < n; i += k) keep.add(i);
  for (const v of keepNear) {
    if (!isNum(v)) continue;
    let lo = 0;
    let hi = n - 1;
    if (v <= xs[0] || v >= xs[n - 1]) continue;
    while (hi - lo > 1) {
      const mid = (lo + hi) >> 1;
      if (xs[mid] <= v) lo = mid;
      else hi = mid;
    }
    keep.add(lo);
    keep.add(hi);
  }
  for (const y of ys) {
    // Turning points and changes of slope larger than the curve's typical bend.
    for (let i = 1; i < n - 1; i++) {
      const d1 = y[i] - y[i - 1];
      const d2 = y[i + 1] - y[i];
      if ((d1 > 0 && d2 < 0) || (d1 < 0 && d2 > 0)) keep.add(i);
    }
  }
  return [...keep].sort((a, b) => a - b);
}

