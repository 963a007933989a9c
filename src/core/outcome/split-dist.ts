/**
 * The spot at the horizon split into its continuous part and its point masses (components too
 * narrow for any mesh), with the range of log-spot that carries its mass.
 */
import type { SpotDist } from '../dist.js';

/** z-range kept on each side of a mixture component (Φ(−9.5) ≈ 1e-21). */
export const Z_RANGE = 9.5;
/** Components lighter than this do not shape the integration mesh. */
export const MESH_MIN_WEIGHT = 1e-17;

/**
 * Components narrower than this (in log-spot) are treated as point masses: a mesh cannot resolve
 * them next to ln S, and the error of doing so is of the order of s in the quantiles and s² in
 * the expectations.
 */
const POINT_S = 1e-8;

export interface SplitDist {
  cont: SpotDist;
  points: { S: number; w: number }[];
}

export function splitDist(d: SpotDist): SplitDist {
  const cont = d.components.filter((c) => c.s >= POINT_S);
  const points = d.components.filter((c) => !(c.s >= POINT_S)).map((c) => ({ S: Math.exp(c.mu), w: c.weight }));
  return { cont: { components: cont }, points };
}

/** [lo, hi] of ln S outside which a split distribution has negligible mass (also for S·f). */
export function logRange(d: SplitDist): [number, number] {
  let lo = Infinity;
  let hi = -Infinity;
  for (const c of d.cont.components) {
    if (c.weight < MESH_MIN_WEIGHT) continue;
    lo = Math.min(lo, c.mu - Z_RANGE * c.s);
    hi = Math.max(hi, c.mu + c.s * c.s + Z_RANGE * c.s);
  }
  for (const a of d.points) {
    lo = Math.min(lo, Math.log(a.S));
    hi = Math.max(hi, Math.log(a.S));
  }
  return [lo, hi];
}

/**
 * The point masses of a split distribution whose P&L is below y (≤ y unless strict): their
 * probability, or with `weighted` their P&L-weighted sum.
 */
export function pointsBelow(f: (s: number) => number, d: SplitDist, y: number, strict: boolean, weighted: boolean): number {
  let t = 0;
  for (const a of d.points) {
    const v = f(a.S);
    if (strict ? v < y : v <= y) t += weighted ? a.w * v : a.w;
  }
  return t;
}

/** Σ weight × P&L over the point masses. */
export function pointsAll(f: (s: number) => number, d: SplitDist): number {
  return d.points.reduce((t, a) => t + a.w * f(a.S), 0);
}
