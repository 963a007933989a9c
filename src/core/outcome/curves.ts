/**
 * Sampled curves for the chart: the spot densities under the view and the market walk and the P&L across spots at
 * the horizon, and the P&L density under the view (a histogram of its continuous part between
 * the 0.5% and 99.5% quantiles, atoms listed apart).
 */
import { logDensity, quantile as spotQuantile, type SpotDist } from '../dist.js';
import { dedupe } from '../numeric/sorted.js';
import type { Curves } from '../types.js';
import type { Atom, PnlEngine } from './engine.js';
import type { WalkFigures } from './figures.js';

/** Probability from which a P&L atom is listed for the chart. */
const ATOM_LIST_MIN = 1e-6;
const CURVE_POINTS = 200;
const PNL_BINS = 120;

export interface CurvesInput {
  dView: SpotDist;
  dMkt: SpotDist;
  /** the P&L at S, with x = ln S given too */
  pnlAt: (x: number, s: number) => number;
  strikes: number[];
  breakevens: number[];
  spot: number;
  /** the engine under the view and its figures */
  eng: PnlEngine;
  figures: WalkFigures;
  /** tolerance of the quantiles (money) */
  tolY: number;
}

/** The spots sampled: the central 99% of both walks and the spot, strikes and breakevens near them. */
function spotPoints(c: CurvesInput): number[] {
  const { dView, dMkt, spot } = c;
  const qlo = Math.min(spotQuantile(dView, 0.005), spotQuantile(dMkt, 0.005), spot);
  const qhi = Math.max(spotQuantile(dView, 0.995), spotQuantile(dMkt, 0.995), spot);
  // strikes and breakevens are covered, within a window that keeps the chart readable
  const marks = [...c.strikes, ...c.breakevens].filter((x) => x >= qlo / 4 && x <= qhi * 4);
  let lo = Math.min(qlo, ...marks);
  let hi = Math.max(qhi, ...marks);
  const margin = 0.03 * (hi - lo) || 0.05 * spot;
  lo = Math.max(lo - margin, lo * 0.5);
  hi = hi + margin;
  const n = CURVE_POINTS - marks.length;
  const xs: number[] = [];
  for (let i = 0; i < n; i++) xs.push(lo + ((hi - lo) * i) / (n - 1));
  return dedupe([...xs, ...marks.filter((x) => x > lo && x < hi)]);
}

/** P&L density under the view: histogram of the continuous part, atoms listed apart */
function pnlDensity(c: CurvesInput): Curves['pnlDensity'] {
  const { eng, tolY } = c;
  const { atoms, cache } = c.figures;
  const listed = atoms.filter((a: Atom) => a.prob >= ATOM_LIST_MIN);
  // the chart's outer quantiles need not be as tight as the reported ones (1e-7 of the scale)
  let ya = c.figures.quantile(0.005, 100 * tolY);
  let yb = c.figures.quantile(0.995, 100 * tolY);
  if (!(yb - ya > 1e-9 * Math.max(1, Math.abs(ya), Math.abs(yb)))) {
    const w = 0.01 * Math.max(1, Math.abs(ya));
    ya -= w;
    yb += w;
  }
  const width = (yb - ya) / PNL_BINS;
  // interior edges use chart-grade crossings; the two outer ones are exact so that the bins carry
  // exactly the probability between the 0.5% and 99.5% quantiles
  const Gc = (y: number, precise = false): number => {
    let g = eng.probBelow(y, false, precise);
    for (const a of listed) if ((a.lo ?? a.x) <= y) g -= a.prob;
    return g;
  };
  const x: number[] = [];
  const dens: number[] = [];
  // the 0.5% quantile is known to a bracket (lo, ya]: start from P&L ≤ lo so that a near-atom
  // squeezed inside the bracket lands in the first bin
  let gPrev = Gc(ya, true);
  const below = cache.lastBelow(ya);
  if (below >= 0 && ya - cache.ys[below] <= tolY) {
    gPrev = cache.gs[below];
    for (const a of listed) if ((a.lo ?? a.x) <= cache.ys[below]) gPrev -= a.prob;
  }
  for (let i = 0; i < PNL_BINS; i++) {
    const e = i === PNL_BINS - 1 ? yb : ya + width * (i + 1);
    const g = Gc(e, i === PNL_BINS - 1);
    x.push(ya + width * (i + 0.5));
    dens.push(Math.max(0, g - gPrev) / width);
    gPrev = g;
  }
  return { x, density: dens, atoms: listed.map((a) => ({ x: a.x, prob: a.prob })) };
}

export function buildCurves(c: CurvesInput): Curves {
  const spot = spotPoints(c);
  const n = spot.length;
  const densityView: number[] = new Array(n);
  const densityMarket: number[] = new Array(n);
  const pnl: number[] = new Array(n);
  for (let i = 0; i < n; i++) {
    // one logarithm per point for both densities and the P&L (density(d, x) is logDensity(d, ln x)/x)
    const s = spot[i];
    const x = Math.log(s);
    densityView[i] = s > 0 && s !== Infinity ? logDensity(c.dView, x) / s : 0;
    densityMarket[i] = s > 0 && s !== Infinity ? logDensity(c.dMkt, x) / s : 0;
    pnl[i] = c.pnlAt(x, s);
  }
  return { spot, densityView, densityMarket, pnl, pnlDensity: pnlDensity(c) };
}
