/**
 * The space grid of the backward solves: x = ln S stretched by sinh around ln K, with the strike
 * and the spot on nodes; and the cache of grids and jump weights a caller may keep across solves
 * on the same layout (the bumps of the Greeks).
 */
import type { JumpOp } from './jump-integral.js';
import { halfWidth, totalSd, type Problem } from './problem.js';

/**
 * Grids and jump-integral weights already built, for re-solves on the same layout (the vega and
 * rho bumps reuse the grid of the base solve). Owned by the caller: americanGreeks keeps one per
 * call unless it is handed one.
 */
export class FdCache {
  /** at most this many grids; beyond, the cache starts afresh */
  static readonly MAX_GRIDS = 32;
  readonly grids = new Map<string, Float64Array>();
  readonly jumpOps = new WeakMap<Float64Array, { m: number; d: number; lam: number; op: JumpOp }>();
}


/**
 * Nodes in x: ln K + c·sinh(ξ), ξ uniform with spacing chosen from `n` intervals over the
 * requested span, extended outwards so that ξ = 0 (the strike) is exactly a node. With `xOn`
 * given, the spacing is shrunk (never widened) so that xOn is a node too, unless it lies within
 * half a step of the strike (then the caller interpolates). `refine` divides the spacing so chosen (and keeps both
 * nodes).
 */
export function sinhGrid(xK: number, xLo: number, xHi: number, n: number, c: number, xOn?: number, refine = 1): Float64Array {
  const lo = Math.asinh((xLo - xK) / c);
  const hi = Math.asinh((xHi - xK) / c);
  let d = (hi - lo) / n;
  let kOn = 0;
  let xiOn = 0;
  if (xOn !== undefined) {
    xiOn = Math.asinh((xOn - xK) / c);
    const ratio = Math.abs(xiOn) / d;
    const k = Math.ceil(ratio - 1e-9);
    if (ratio >= 0.5) {
      d = Math.abs(xiOn) / k;
      kOn = xiOn > 0 ? k : -k;
    }
  }
  // a refined grid divides exactly the spacing of the base one, as Richardson needs
  d /= refine;
  kOn *= refine;
  const nLo = Math.max(1, Math.ceil(-lo / d - 1e-9));
  const nHi = Math.max(1, Math.ceil(hi / d - 1e-9));
  const x = new Float64Array(nLo + nHi + 1);
  for (let i = -nLo; i <= nHi; i++) x[i + nLo] = xK + c * Math.sinh(i * d);
  x[nLo] = xK;
  if (kOn !== 0 && xOn !== undefined) x[nLo + kOn] = xOn;
  return x;
}

/** Grid for a problem seen from spot S: spans ln K ± w and S ± w/2 at least (from the cache when it has it). */
export function gridFor(cache: FdCache, p: Problem, S: number, nx: number, refine = 1): Float64Array {
  const j = p.jumps;
  const key = `${p.kind}|${p.K}|${p.T}|${p.r}|${p.q}|${p.sigma}|${j ? `${j.intensity}|${j.mean}|${j.sd}` : ''}|${S}|${nx}|${refine}`;
  const hit = cache.grids.get(key);
  if (hit) return hit;
  if (cache.grids.size > FdCache.MAX_GRIDS) cache.grids.clear();
  const x = makeGrid(p, S, nx, refine);
  cache.grids.set(key, x);
  return x;
}

function makeGrid(p: Problem, S: number, nx: number, refine: number): Float64Array {
  const xK = Math.log(p.K);
  const xs = Math.log(S);
  const w = halfWidth(p, 5);
  const xLo = Math.min(xK - w, xs - 0.6 * w);
  const xHi = Math.max(xK + w, xs + 0.6 * w);
  const conc = Math.max(0.5 * p.sigma * Math.sqrt(p.T), 0.25 * totalSd(p), 0.01);
  // keep the density of nodes near the strike when the span is widened for a far spot
  const n = Math.round(nx * Math.max(1, (Math.asinh((xHi - xK) / conc) - Math.asinh((xLo - xK) / conc)) / (2 * Math.asinh(w / conc))));
  return sinhGrid(xK, xLo, xHi, n, conc, xs, refine);
}

