/** The American value at one spot (Richardson over two grids; re-solved finer near the exercise boundary). */
import { activeJumps } from '../jumps.js';
import type { Jumps, OptionInputs } from '../types.js';
import { nearSize, richardson, sizeFor, type FdSize } from './at-spot.js';
import { deterministicValue } from './deterministic.js';
import { FdCache } from './grid.js';
import { checkInputs, payoff, type Problem } from './problem.js';

export interface AmericanOptions {
  /** 'normal': about 1e-4 absolute on typical cases; 'fine': about 1e-5, several times slower. */
  accuracy?: 'normal' | 'fine';
  /**
   * Merton jumps (intensity per year, mean and s.d. of the log jump); σ is then the diffusion's
   * volatility and the drift is compensated. The backward equation gains the jump integral
   * (a PIDE), treated explicitly.
   */
  jumps?: Jumps;
  /**
   * Grids and jump weights kept by the caller across calls on the same layout (default: a new
   * cache for the call, shared by its own re-solves only).
   */
  cache?: FdCache;
}

/** Value of the American option on grids of the given size (Richardson over n and 2n). */
export function americanFdValue(o: OptionInputs, size: FdSize, opts: Pick<AmericanOptions, 'jumps' | 'cache'> = {}): number {
  checkInputs(o, opts.jumps);
  const { kind, S, K, T, r, q, sigma } = o;
  const j = activeJumps(opts.jumps);
  if (T === 0) return payoff(kind, S, K);
  if (!j && sigma * Math.sqrt(T) < 1e-4) return deterministicValue(o);
  const p: Problem = { kind, K, T, r, q, sigma, jumps: j };
  const s = { p, S, withTheta: false, layout: p, cache: opts.cache ?? new FdCache() };
  let res = richardson(s, size);
  if (res.near) res = richardson(s, nearSize(size));
  return Math.max(res.f, payoff(kind, S, K));
}

/** Value of the American option, 'normal' or 'fine' accuracy. */
export function americanValue(o: OptionInputs, opts: AmericanOptions = {}): number {
  return americanFdValue(o, sizeFor(opts.accuracy ?? 'normal'), opts);
}
