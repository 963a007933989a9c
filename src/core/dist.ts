/**
 * The spot at a horizon under a walk, as a finite mixture of lognormals.
 *
 * Under dS = (μ − q) S dt + σ S dW the log of the spot is normal:
 *   ln S_h ~ N(ln S + (μ − q − σ²/2) h, σ² h).
 * With Merton (1976) jumps (Poisson intensity λ, log jump ~ N(m, δ²)), conditioning on the number
 * n of jumps by the horizon gives a Poisson mixture of normals in ln S_h:
 *   weight e^{−λh}(λh)ⁿ/n!,  mean ln S + (μ − q − λκ − σ²/2) h + n m,  variance σ² h + n δ²,
 * with κ = e^{m + δ²/2} − 1, the compensator that keeps E[S_h] = S e^{(μ−q)h}.
 *
 * A walk with a drift uncertainty τ (μ ~ N(drift, τ²)) gives the predictive law: each component's
 * variance gains τ²h² (predictive.ts explains why this is exact).
 *
 * Every probability here is built from Φ (normal.ts) with the tail chosen so that both tails keep
 * full relative precision. Components with s = 0 (h = 0, or σ = 0 with no jump) are point masses.
 */
import { normCdf, normInv, normPdf } from './normal.js';
import type { Walk } from './types.js';
import { logFactorial } from './numeric/special.js';
import { hasJumps, jumpCompensator } from './jumps.js';

/** ln S_h ~ N(mu, s²) with probability `weight`. */
export interface Component {
  weight: number;
  mu: number;
  s: number;
}

export type SpotDist = { components: Component[] };

/** Remaining Poisson weight below which the jump series is cut. */
const POISSON_TAIL = 1e-16;
/** Components lighter than this are dropped (their total stays below about 1e-16). */
const MIN_WEIGHT = 1e-18;
/** Hard cap on the number of jump components (reached only for λh in the thousands). */
const MAX_COMPONENTS = 4000;


/**
 * The distribution of the spot `years` ahead under `walk` (drift = expected total return, vol,
 * optional jumps), with dividend yield `q`. `years` ≤ 0 or a zero vol give point masses.
 */
export function walkDistribution(spot: number, years: number, q: number, walk: Walk): SpotDist {
  const h = years > 0 ? years : 0;
  const sigma = Math.abs(walk.vol);
  const x0 = Math.log(spot);
  const j = walk.jumps;
  const lh = hasJumps(j) ? j.intensity * h : 0;
  // drift uncertainty τ (predictive.ts): every component's log-variance gains τ²h², exactly
  const tau = walk.driftSe !== undefined && walk.driftSe > 0 ? walk.driftSe : 0;
  const extra = tau > 0 ? tau * tau * h * h : 0;
  if (!j || !(lh > 0)) {
    return {
      components: [{ weight: 1, mu: x0 + (walk.drift - q - 0.5 * sigma * sigma) * h, s: extra > 0 ? Math.sqrt(sigma * sigma * h + extra) : sigma * Math.sqrt(h) }],
    };
  }
  const m = j.mean;
  const d2 = j.sd * j.sd;
  const kappa = jumpCompensator(j);
  const base = x0 + (walk.drift - q - j.intensity * kappa - 0.5 * sigma * sigma) * h;
  const comps: Component[] = [];
  const logLh = Math.log(lh);
  let total = 0;
  for (let n = 0; n < MAX_COMPONENTS; n++) {
    const w = Math.exp(-lh + n * logLh - logFactorial(n));
    if (w >= MIN_WEIGHT) {
      comps.push({ weight: w, mu: base + n * m, s: Math.sqrt(sigma * sigma * h + n * d2 + extra) });
      total += w;
    }
    // bound on the remaining weight Σ_{k>n} w_k ≤ w_n·r/(1−r), r = λh/(n+2) < 1 (ratio bound)
    if (n + 2 > lh) {
      const r = lh / (n + 2);
      const rest = (w * (lh / (n + 1))) / (1 - r);
      if (rest < POISSON_TAIL) break;
    }
  }
  // renormalise the dropped crumbs (≤ about 1e-16 in all) so that the weights sum to one
  for (const c of comps) c.weight /= total;
  return { components: comps };
}

/** z of ln x in component c; ±Infinity at the ends and for point masses. */
function zOf(c: Component, x: number): number {
  if (!(x > 0)) return -Infinity;
  if (x === Infinity) return Infinity;
  const lx = Math.log(x);
  if (c.s > 0) return (lx - c.mu) / c.s;
  return lx >= c.mu ? Infinity : -Infinity;
}

/** Density of S_h at x (per unit of spot); point masses contribute nothing. */
export function density(d: SpotDist, x: number): number {
  if (!(x > 0) || x === Infinity) return 0;
  const lx = Math.log(x);
  let f = 0;
  for (const c of d.components) {
    if (c.s > 0) f += (c.weight * normPdf((lx - c.mu) / c.s)) / c.s;
  }
  return f / x;
}

/** Density of ln S_h at y (per unit of log spot). */
export function logDensity(d: SpotDist, y: number): number {
  let f = 0;
  for (const c of d.components) {
    if (c.s > 0) f += (c.weight * normPdf((y - c.mu) / c.s)) / c.s;
  }
  return f;
}

/** P(S_h ≤ x). */
export function cdf(d: SpotDist, x: number): number {
  let p = 0;
  for (const c of d.components) p += c.weight * normCdf(zOf(c, x));
  return Math.min(1, p);
}

/** P(S_h > x), with full relative precision in the upper tail. */
export function sf(d: SpotDist, x: number): number {
  let p = 0;
  for (const c of d.components) p += c.weight * normCdf(-zOf(c, x));
  return Math.min(1, p);
}

/** Φ(zb) − Φ(za) for za ≤ zb, from whichever tail keeps precision. */
function normDiff(za: number, zb: number): number {
  if (!(zb > za)) return 0;
  if (za > 0) return normCdf(-za) - normCdf(-zb);
  return normCdf(zb) - normCdf(za);
}

/** P(a < S_h ≤ b). */
export function prob(d: SpotDist, a: number, b: number): number {
  if (!(b > a)) return 0;
  let p = 0;
  for (const c of d.components) p += c.weight * normDiff(zOf(c, a), zOf(c, b));
  return Math.min(1, Math.max(0, p));
}

/** E[S_h 1{a < S_h ≤ b}]. */
export function partialExpectation(d: SpotDist, a: number, b: number): number {
  if (!(b > a)) return 0;
  let e = 0;
  for (const c of d.components) {
    const za = zOf(c, a);
    const zb = zOf(c, b);
    if (!(zb > za)) continue;
    e += c.weight * Math.exp(c.mu + 0.5 * c.s * c.s) * normDiff(za - c.s, zb - c.s);
  }
  return e;
}

/** E[S_h]. */
export function mean(d: SpotDist): number {
  let e = 0;
  for (const c of d.components) e += c.weight * Math.exp(c.mu + 0.5 * c.s * c.s);
  return e;
}

/**
 * Lower quantile inf{x > 0 : P(S_h ≤ x) ≥ p}. p is clamped to [1e-300, 1 − 1e-16] so the answer
 * is always a positive finite number. Safeguarded Newton on ln x inside the bracket spanned by the
 * component quantiles (the mixture cdf lies between the smallest and largest of them).
 */
export function quantile(d: SpotDist, p: number): number {
  const pp = Math.min(1 - 1e-16, Math.max(1e-300, p));
  const comps = d.components;
  if (comps.length === 1) {
    const c = comps[0];
    return Math.exp(c.s > 0 ? c.mu + c.s * normInv(pp) : c.mu);
  }
  let lo = Infinity;
  let hi = -Infinity;
  for (const c of comps) {
    const y = c.s > 0 ? c.mu + c.s * normInv(pp) : c.mu;
    if (y < lo) lo = y;
    if (y > hi) hi = y;
  }
  const F = (y: number): number => {
    let s = 0;
    for (const c of comps) s += c.weight * normCdf(c.s > 0 ? (y - c.mu) / c.s : y >= c.mu ? Infinity : -Infinity);
    return s;
  };
  // invariant: F(lo) < p ≤ F(hi) (widen slightly in case of rounding at the ends)
  let width = Math.max(1e-12, hi - lo);
  while (F(lo) >= pp && width < 1e6) { lo -= width; width *= 2; }
  width = Math.max(1e-12, hi - lo);
  while (F(hi) < pp && width < 1e6) { hi += width; width *= 2; }
  let y = 0.5 * (lo + hi);
  let result = NaN;
  for (let it = 0; it < 200; it++) {
    if (hi - lo <= 4e-16 * Math.max(1, Math.abs(lo), Math.abs(hi))) break;
    const fy = F(y);
    if (fy >= pp) hi = y;
    else lo = y;
    const g = logDensity(d, y);
    const step = g > 0 ? (fy - pp) / g : NaN;
    const next = y - step;
    if (next > lo && next < hi) {
      if (Math.abs(step) <= 1e-15 * Math.max(1, Math.abs(y))) {
        result = next;
        break;
      }
      y = next;
    } else {
      y = 0.5 * (lo + hi);
    }
  }
  if (!Number.isNaN(result)) return Math.exp(result); // converged where F is continuous
  // the bracket closed on a jump: a point mass inside it is the exact answer when it reaches p
  for (const c of comps) {
    if (c.s === 0 && c.mu > lo && c.mu <= hi && F(c.mu) >= pp) return Math.exp(c.mu);
  }
  return Math.exp(hi);
}
