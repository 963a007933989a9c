/**
 * Value and Greeks of an American option from the backward solves: value, delta, gamma and theta
 * from the grid at the spot, vega and rho by bumps re-solved on the same grids.
 */
import { activeJumps } from '../jumps.js';
import type { Greeks, OptionInputs } from '../types.js';
import { nearSize, richardson, sizeFor } from './at-spot.js';
import { deterministicGreeks } from './deterministic.js';
import { FdCache } from './grid.js';
import { checkInputs, payoff, type Problem } from './problem.js';
import type { AmericanOptions } from './value.js';

/**
 * Value and Greeks of an American option (per share; docs/design.md §3 units). Value, delta and gamma
 * from the grid at the spot; theta from the last three time levels; vega and rho by central
 * bumps of ±0.5 vol point and ±0.5% of rate, re-solved on the same grids (so the discretisation
 * error largely cancels in the differences). Every figure is the Richardson combination over the
 * two grid sizes.
 */
export function americanGreeks(o: OptionInputs, opts: AmericanOptions = {}): Greeks {
  checkInputs(o, opts.jumps);
  const { kind, S, K, T, r, q, sigma } = o;
  const j = activeJumps(opts.jumps);
  const cache = opts.cache ?? new FdCache();
  let size = sizeFor(opts.accuracy ?? 'normal');
  const intrinsic = payoff(kind, S, K);
  if (T === 0) {
    const itm = kind === 'call' ? S > K : S < K;
    return { value: intrinsic, delta: itm ? (kind === 'call' ? 1 : -1) : 0, gamma: 0, vega: 0, theta: 0, rho: 0 };
  }
  const p: Problem = { kind, K, T, r, q, sigma, jumps: j };
  if (!j && sigma * Math.sqrt(T) < 1e-4) return deterministicGreeks(o);
  let base = richardson({ p, S, withTheta: true, layout: p, cache }, size);
  if (base.near) {
    size = nearSize(size);
    base = richardson({ p, S, withTheta: true, layout: p, cache }, size);
  }
  const value = Math.max(base.f, intrinsic);
  let delta = base.fx / S;
  let gamma = (base.fxx - base.fx) / (S * S);
  let theta = -base.ft / 365;
  if (base.f <= intrinsic) {
    // exercise region: V = payoff
    delta = intrinsic > 0 ? (kind === 'call' ? 1 : -1) : 0;
    gamma = 0;
    theta = 0;
  } else {
    // bounds of the American value (convex in S, between the payoff and its asymptotes):
    // |delta| ≤ max(1, e^{−qT}) with the option's sign, gamma ≥ 0. Only differences across the
    // exercise boundary (where V_SS jumps) can step outside them, and only by a little.
    const dMax = Math.max(1, Math.exp(-q * T));
    delta = kind === 'call' ? Math.min(Math.max(delta, 0), dMax) : Math.min(Math.max(delta, -dMax), 0);
    if (gamma < 0) gamma = 0;
  }
  const at = (sig: number, rate: number): number => richardson({ p: { ...p, sigma: sig, r: rate }, S, withTheta: false, layout: p, cache }, size).f;
  const hv = 0.005;
  // central ±0.5 vol point; forward from σ when σ is below the bump
  const vega = sigma >= hv ? (at(sigma + hv, r) - at(sigma - hv, r)) / (2 * hv) * 0.01 : ((at(sigma + hv, r) - at(sigma, r)) / hv) * 0.01;
  const hr = 0.005;
  const rho = ((at(sigma, r + hr) - at(sigma, r - hr)) / (2 * hr)) * 0.01;
  return { value, delta, gamma, vega, theta, rho };
}
