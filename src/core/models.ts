/**
 * Model choice, in one place: which numerical method answers a question, given the exercise style
 * and whether jumps are active. The service layer (src/verbs) asks these functions and never picks
 * a solver itself. Per-leg valuation (European / early exercise / jumps) for checks is chosen in
 * ./pricer.ts; whether jumps are active is ./jumps.ts.
 *
 *   implied vol   european → Black-Scholes-Merton (./iv.ts); with jumps → Merton (./merton.ts);
 *                 american → finite differences on the backward equation (./american.ts),
 *                 with or without jumps
 *   touch         no jumps → closed forms (./touch.ts); with jumps → seeded Monte Carlo with an
 *                 exact Brownian-bridge crossing (./touch-jumps.ts) and the chance of ending
 *                 beyond the level exactly from the Poisson mixture (./dist.ts)
 */
import { americanImpliedVol } from './american.js';
import { activeJumps } from './jumps.js';
import { cdf as spotCdf, sf as spotSf, walkDistribution } from './dist.js';
import { impliedVol, type IvResult } from './iv.js';
import { mertonImpliedVol } from './merton.js';
import { probBeyondAtEnd, touchProb } from './touch.js';
import { probBeyondAtEndPredictive, touchProbPredictive } from './predictive.js';
import { touchProbJumps } from './touch-jumps.js';
import type { ExerciseStyle, Jumps, OptionKind } from './types.js';

/** Which method an implied vol was solved with. */
export type IvMethod = 'american' | 'american-jumps' | 'merton' | 'bsm';

export interface IvQuestion {
  kind: OptionKind;
  price: number;
  S: number;
  K: number;
  T: number;
  r: number;
  q: number;
  style: ExerciseStyle;
  jumps?: Jumps;
}

/** The implied vol of one option price under the model its style and jumps call for. */
export function solveImpliedVol(v: IvQuestion): { result: IvResult; method: IvMethod } {
  if (v.style === 'american') {
    return { result: americanImpliedVol(v.kind, v.price, v.S, v.K, v.T, v.r, v.q, v.jumps), method: v.jumps ? 'american-jumps' : 'american' };
  }
  if (v.jumps) return { result: mertonImpliedVol(v.kind, v.price, v.S, v.K, v.T, v.r, v.q, v.jumps), method: 'merton' };
  return { result: impliedVol(v.kind, v.price, v.S, v.K, v.T, v.r, v.q), method: 'bsm' };
}

/** Monte Carlo paths for touch under jumps (standard error ≤ 0.25 percentage points) and their seed. */
export const TOUCH_MC_PATHS = 40_000;
export const TOUCH_MC_SEED = 1;

export interface TouchQuestion {
  S: number;
  level: number;
  T: number;
  q: number;
  vol: number;
  jumps?: Jumps;
}

export interface TouchFigures {
  /** chance of touching the level by T */
  touch: number;
  /** chance of ending at or beyond it */
  beyond: number;
  /** one standard error of `touch` when it is a Monte Carlo estimate */
  stderr?: number;
  paths?: number;
}

/**
 * Touching and ending beyond a level under a walk of the given drift (the view's, or the rate).
 * `driftSe` > 0: the drift is uncertain, μ ~ N(drift, driftSe²) (predictive.ts): the closed form
 * is averaged over μ; the Monte Carlo draws μ per path; ending beyond is exact either way.
 */
export function touchFigures(t: TouchQuestion, drift: number, driftSe = 0): TouchFigures {
  const jumps = activeJumps(t.jumps);
  const tau = driftSe > 0 ? driftSe : 0;
  if (!jumps) {
    return tau > 0
      ? {
          touch: touchProbPredictive(t.S, t.level, t.T, drift, tau, t.q, t.vol),
          beyond: probBeyondAtEndPredictive(t.S, t.level, t.T, drift, tau, t.q, t.vol),
        }
      : {
          touch: touchProb(t.S, t.level, t.T, drift, t.q, t.vol),
          beyond: probBeyondAtEnd(t.S, t.level, t.T, drift, t.q, t.vol),
        };
  }
  // first passage with jumps has no closed form: a seeded Monte Carlo with its standard error;
  // the chance of ending beyond is exact from the Poisson mixture of lognormals
  const mc = touchProbJumps(t.S, t.level, t.T, drift, t.q, t.vol, jumps, { paths: TOUCH_MC_PATHS, seed: TOUCH_MC_SEED, ...(tau > 0 ? { driftSe: tau } : {}) });
  const d = walkDistribution(t.S, t.T, t.q, { drift, vol: t.vol, jumps, ...(tau > 0 ? { driftSe: tau } : {}) });
  const beyond = t.level >= t.S ? spotSf(d, t.level) : spotCdf(d, t.level);
  return { touch: mc.prob, beyond, stderr: mc.stderr, paths: mc.paths };
}
