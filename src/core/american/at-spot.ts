/**
 * The value and its x-derivatives at the spot from backward solves: read at the spot's node (or
 * interpolated by a cubic through four nodes), Richardson-combined over two grids.
 */
import { gridFor, type FdCache } from './grid.js';
import type { Problem } from './problem.js';
import { solveBackward } from './solver.js';

/** Grid sizes: space intervals and time steps. */
export interface FdSize {
  nx: number;
  nt: number;
}

/** Index j such that the four nodes j..j+3 surround x as centrally as possible. */
function stencil4(x: Float64Array, xs: number): number {
  let lo = 0;
  let hi = x.length - 1;
  while (hi - lo > 1) {
    const m = (lo + hi) >> 1;
    if (x[m] <= xs) lo = m;
    else hi = m;
  }
  return Math.min(Math.max(lo - 1, 0), x.length - 4);
}

/** Value, first and second derivative at xs of the cubic through four nodes starting at j. */
function lagrange4(x: Float64Array, v: Float64Array, j: number, xs: number): [number, number, number] {
  let f = 0;
  let f1 = 0;
  let f2 = 0;
  for (let k = 0; k < 4; k++) {
    const xk = x[j + k];
    let den = 1;
    const d: number[] = [];
    for (let m = 0; m < 4; m++) {
      if (m === k) continue;
      den *= xk - x[j + m];
      d.push(xs - x[j + m]);
    }
    const w = v[j + k] / den;
    f += w * d[0] * d[1] * d[2];
    f1 += w * (d[0] * d[1] + d[0] * d[2] + d[1] * d[2]);
    f2 += w * 2 * (d[0] + d[1] + d[2]);
  }
  return [f, f1, f2];
}

/** Value and x-derivatives at the spot from one solve, plus the time levels for theta. */
export interface AtSpot {
  f: number;
  fx: number;
  fxx: number;
  /** ∂V/∂τ at τ = T, one-sided through the last three levels */
  ft: number;
  /** the spot is in the continuation region with an exercised node within NEAR nodes of it */
  near: boolean;
}

/** Nodes from the spot within which an exercised node marks the spot as near the boundary. */
const NEAR = 4;

/** A solve read at the spot: the problem, the layout its grid is made for, and the grid's size. */
export interface SpotSolve {
  p: Problem;
  S: number;
  withTheta: boolean;
  /** the problem the grid is laid out for (the unbumped one, so that bumps share the grid) */
  layout: Problem;
  cache: FdCache;
}

/** Reads value, first and second x-derivative at xs from node values (central differences at a node, else a cubic). */
function readerAt(x: Float64Array, xs: number): (v: Float64Array) => [number, number, number] {
  // the spot is a node unless it lies within half a step of the strike: then interpolate
  const i = x.indexOf(xs);
  if (i > 0 && i < x.length - 1) {
    const hm = x[i] - x[i - 1];
    const hp = x[i + 1] - x[i];
    return (v) => [
      v[i],
      (-hp / (hm * (hm + hp))) * v[i - 1] + ((hp - hm) / (hm * hp)) * v[i] + (hm / (hp * (hm + hp))) * v[i + 1],
      2 * (v[i - 1] / (hm * (hm + hp)) - v[i] / (hm * hp) + v[i + 1] / (hp * (hm + hp))),
    ];
  }
  const j = stencil4(x, xs);
  return (v) => lagrange4(x, v, j, xs);
}

/** The spot is in the continuation region with an exercised node within NEAR nodes of it. */
function nearBoundary(x: Float64Array, xs: number, v: Float64Array, g: Float64Array): boolean {
  const i = x.indexOf(xs);
  const ic = i > 0 ? i : stencil4(x, xs) + 1;
  if (!(v[ic] > g[ic])) return false;
  let near = false;
  for (let k = Math.max(0, ic - NEAR); k <= Math.min(x.length - 1, ic + NEAR); k++) if (v[k] <= g[k]) near = true;
  return near;
}

function solveAtSpot(s: SpotSolve, nx: number, refine: number, nt: number): AtSpot {
  const { p, S } = s;
  const x = gridFor(s.cache, s.layout, S, nx, refine);
  const xs = Math.log(S);
  const sol = solveBackward(p, x, { nt, cache: s.cache });
  const at = readerAt(x, xs);
  const [f, fx, fxx] = at(sol.v);
  const near = nearBoundary(x, xs, sol.v, sol.g);
  let ft = 0;
  if (s.withTheta) {
    const f1 = at(sol.v1)[0];
    const f2 = at(sol.v2)[0];
    const h1 = sol.t0 - sol.t1;
    const h2 = sol.t1 - sol.t2;
    ft = ((2 * h1 + h2) / (h1 * (h1 + h2))) * f - ((h1 + h2) / (h1 * h2)) * f1 + (h1 / (h2 * (h1 + h2))) * f2;
  }
  return { f, fx, fxx, ft, near };
}

/**
 * Richardson combination of a coarse solve (space step 2h, nt/2 time steps) and a fine one (h, nt):
 * both errors are O(h²) and O(Δt²), so both shrink 4× together and (4·fine − coarse)/3 cancels
 * their leading terms.
 */
export function richardson(s: SpotSolve, size: FdSize): AtSpot {
  const c = solveAtSpot(s, size.nx, 1, Math.max(8, Math.round(size.nt / 2)));
  const f = solveAtSpot(s, size.nx, 2, size.nt);
  const ex = (a: number, b: number): number => b + (b - a) / 3;
  return { f: ex(c.f, f.f), fx: ex(c.fx, f.fx), fxx: ex(c.fxx, f.fxx), ft: ex(c.ft, f.ft), near: f.near };
}

/**
 * A spot within a few nodes of the exercise boundary: the error there depends erratically on where
 * the boundary falls between nodes (space) and steps (time), and the two solves of the Richardson
 * pair need not share it. Such spots (deep in the money, a small time value) are re-solved on
 * grids twice as fine in both directions.
 */
export function nearSize(size: FdSize): FdSize {
  return { nx: 2 * size.nx, nt: 2 * size.nt };
}

/**
 * Grid sizes for an accuracy level: the value is the Richardson combination (4·V_fine − V_coarse)/3
 * of a fine solve (2·nx space intervals, nt time steps) and a coarse one (nx, nt/2).
 */
export function sizeFor(accuracy: 'normal' | 'fine'): FdSize {
  return accuracy === 'fine' ? { nx: 400, nt: 400 } : { nx: 140, nt: 140 };
}
