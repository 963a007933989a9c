/**
 * The figures of one walk from a P&L engine: chance of profit, lower quantiles
 * inf{y : P(P&L ≤ y) ≥ p} (a bracketing solve on the exact P&L cdf, snapped onto atoms) and the
 * average of the worst 5% of outcomes.
 */
import { CdfCache, lowerQuantile } from '../numeric/lower-quantile.js';
import { dedupe } from '../numeric/sorted.js';
import type { Atom, PnlEngine } from './engine.js';

/** The quantile levels reported, in order p05 … p95. */
const LEVELS = [0.05, 0.25, 0.5, 0.75, 0.95];
/** The tail whose average is reported. */
const ALPHA = 0.05;

export interface WalkFigures {
  atoms: Atom[];
  /** the P&L cdf's evaluations so far (brackets later quantile solves) */
  cache: CdfCache;
  /** lower quantile of the P&L, to `tol` (money) */
  quantile: (p: number, tol: number) => number;
  probProfit: number;
  /** quantiles at 5, 25, 50, 75 and 95% */
  qs: number[];
  tailMean05: number;
}

/**
 * Figures under an engine's primary walk. `seeds` are P&L levels where the cdf may jump or bend
 * (the P&L at the kinks); `scale` sets the tolerance (1e-9 of it for quantiles) and what counts as
 * a profit (above 1e-14 of it, so that a P&L flat at zero is not counted).
 */
export function walkFigures(e: PnlEngine, seeds: number[], scale: number): WalkFigures {
  const tolY = 1e-9 * scale;
  const atoms = e.atoms();
  const atomLevels = atoms.map((a) => a.x);
  // the jump of the P&L cdf at each atom level; NaN for an atom spread over [lo, x] (its level
  // is not a single jump, so the quantile solve runs there)
  const atomProbs = atoms.map((a) => (a.lo === undefined || a.lo === a.x ? a.prob : NaN));
  const [y0, y1] = e.yRange();
  const pad = Math.max(1e-7 * scale, 1e-12 * Math.max(Math.abs(y0), Math.abs(y1)));
  const yLo = y0 - pad;
  const yHi = y1 + pad;
  const cache = new CdfCache((y) => e.probBelow(y, false));
  cache.at(yLo);
  cache.at(yHi);
  for (const y of dedupe([...atomLevels, ...seeds])) if (y > yLo && y < yHi) cache.at(y);
  const quantile = (p: number, tol: number): number => lowerQuantile(cache, p, tol, atomLevels, atomProbs);
  const Q = (p: number): number => quantile(p, tolY);
  const probProfit = Math.min(1, Math.max(0, 1 - cache.at(1e-14 * scale)));
  const qs = LEVELS.map(Q);
  const q05 = qs[0];
  const tailMean05 = (e.expectBelow(q05, true) + q05 * (ALPHA - e.probBelow(q05, true))) / ALPHA;
  return { atoms, cache, quantile, probProfit, qs, tailMean05 };
}

/** The five quantiles as the result record names them. */
export function quantileRecord(qs: number[]): { p05: number; p25: number; p50: number; p75: number; p95: number } {
  return { p05: qs[0], p25: qs[1], p50: qs[2], p75: qs[3], p95: qs[4] };
}
