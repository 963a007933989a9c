/**
 * The problem of one backward solve (an option under the walk with rate r, yield q, diffusion vol
 * σ and optional Merton jumps), its payoff and its values at the far ends of the grid.
 */
import { checkMarketInputs, type CheckedInputs } from '../inputs.js';
import { jumpCompensator, jumpVariance, validJumps } from '../jumps.js';
import type { Jumps, OptionKind, OptionTerms } from '../types.js';

/** The option's terms (OptionInputs without the spot: a solve covers every spot) and the jumps. */
export interface Problem extends OptionTerms {
  /** Merton jumps (only active ones count: intensity > 0) */
  jumps?: Jumps;
}

export function payoff(kind: OptionKind, S: number, K: number): number {
  return kind === 'call' ? Math.max(S - K, 0) : Math.max(K - S, 0);
}

/** Value on the boundary nodes at time to expiry τ. */
export function boundaryValue(p: Problem, S: number, tau: number, american: boolean): number {
  const { kind, K, r, q } = p;
  const fwd = kind === 'call' ? S * Math.exp(-q * tau) - K * Math.exp(-r * tau) : K * Math.exp(-r * tau) - S * Math.exp(-q * tau);
  const eu = Math.max(fwd, 0);
  return american ? Math.max(eu, payoff(kind, S, K)) : eu;
}

/** Standard deviation of ln S_T: diffusion and jumps together. */
export function totalSd(p: Problem): number {
  const j = p.jumps;
  const v = p.sigma * p.sigma + (j ? jumpVariance(j) : 0);
  return Math.sqrt(v * p.T);
}

/** Half-width of the grid in x (from ln K), enough that the boundaries do not matter. */
export function halfWidth(p: Problem, sds: number): number {
  const s = totalSd(p);
  const j = p.jumps;
  const comp = j ? j.intensity * jumpCompensator(j) : 0;
  const nu = Math.abs(p.r - p.q - 0.5 * p.sigma * p.sigma - comp) * p.T;
  return sds * s + nu + 0.02;
}

const NAMES = { S: 'S', K: 'K', T: 'T', rq: 'rate and yield', sigma: 'sigma' };

/** Programming errors only (the request edge rejects bad input first): throws a RangeError. */
export function checkInputs(o: CheckedInputs, jumps?: Jumps): void {
  if (jumps && !validJumps(jumps)) {
    throw new RangeError(`american: jumps need a finite intensity ≥ 0, a finite mean and an s.d. ≥ 0 (got ${jumps.intensity}, ${jumps.mean}, ${jumps.sd})`);
  }
  checkMarketInputs('american', NAMES, o);
}
