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
 *   exits         (targets and stops) no jumps → finite differences on the backward equation over
 *                 the region stop < P&L < target, one grid for both walks (./exits.ts); with jumps →
 *                 seeded Monte Carlo with a Brownian-bridge correction (./exits-mc.ts, which says
 *                 why); European legs only (early exercise: not yet)
 */
import { americanImpliedVol } from './american.js';
import { pnlSurface } from './exit-region.js';
import { exitFiguresPde, exitGrid, medianFromSurvival, solveExitBackward, solveExitForward, type ExitFigures, type ExitGrid, type Levels } from './exits.js';
import { GL8_W, GL8_X } from './predictive.js';
import { exitFiguresMc, type ExitMcOptions } from './exits-mc.js';
import { activeJumps } from './jumps.js';
import { cdf as spotCdf, sf as spotSf, walkDistribution } from './dist.js';
import { impliedVol, type IvResult } from './iv.js';
import { mertonImpliedVol } from './merton.js';
import { probBeyondAtEnd, touchProb } from './touch.js';
import { probBeyondAtEndPredictive, touchProbPredictive } from './predictive.js';
import { touchProbJumps } from './touch-jumps.js';
import type { CheckInput, ExerciseStyle, IvInputs, Jumps, TouchInputs, Walk } from './types.js';

/** Which method an implied vol was solved with. */
export type IvMethod = 'american' | 'american-jumps' | 'merton' | 'bsm';

/** One option price to solve for its vol: the option and its market (IvInputs) and the price. */
export interface IvQuestion extends IvInputs {
  price: number;
  style: ExerciseStyle;
  jumps?: Jumps;
}

/** The implied vol of one option price under the model its style and jumps call for. */
export function solveImpliedVol(v: IvQuestion): { result: IvResult; method: IvMethod } {
  if (v.style === 'american') {
    return { result: americanImpliedVol(v, v.price, v.jumps), method: v.jumps ? 'american-jumps' : 'american' };
  }
  if (v.jumps) return { result: mertonImpliedVol(v, v.price, v.jumps), method: 'merton' };
  return { result: impliedVol(v, v.price), method: 'bsm' };
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
  const o: TouchInputs = { S: t.S, level: t.level, T: t.T, drift, q: t.q, sigma: t.vol, driftSe: tau };
  if (!jumps) {
    return tau > 0 ? { touch: touchProbPredictive(o), beyond: probBeyondAtEndPredictive(o) } : { touch: touchProb(o), beyond: probBeyondAtEnd(o) };
  }
  // first passage with jumps has no closed form: a seeded Monte Carlo with its standard error;
  // the chance of ending beyond is exact from the Poisson mixture of lognormals
  const mc = touchProbJumps(o, jumps, { paths: TOUCH_MC_PATHS, seed: TOUCH_MC_SEED });
  const d = walkDistribution(t.S, t.T, t.q, { drift, vol: t.vol, jumps, ...(tau > 0 ? { driftSe: tau } : {}) });
  const beyond = t.level >= t.S ? spotSf(d, t.level) : spotCdf(d, t.level);
  return { touch: mc.prob, beyond, stderr: mc.stderr, paths: mc.paths };
}

export type { ExitFigures, Levels } from './exits.js';

/** Paths and seed of the Monte Carlo used for exits under jumps. */
export const EXITS_MC_PATHS = 20_000;
export const EXITS_MC_SEED = 1;

export interface ExitChances {
  target: number | null;
  stop: number | null;
  /** the P&L today (position value − cost): the start of every path */
  current: number;
  view: ExitFigures;
  market: ExitFigures;
}

/**
 * Exit figures (targets and stops) under the view (input.view) and the market walk (`market`:
 * drift = rate and the market vol; its jumps are the view's). Levels are money P&L of the whole
 * position; the caller has checked that the P&L now lies strictly between them. Monitoring is
 * continuous.
 */
export function exitChances(input: CheckInput, levels: Levels, market: Walk, opts: ExitMcOptions & { driftPanels?: number } = {}): ExitChances {
  const view = input.view;
  const jumps = activeJumps(view.jumps);
  const mk: Walk = { drift: market.drift, vol: market.vol, ...(jumps ? { jumps } : {}) };
  const walks = [view, mk];
  const q = input.market.yield;
  if (jumps) {
    const o = { paths: EXITS_MC_PATHS, seed: EXITS_MC_SEED, ...opts };
    const v = exitFiguresMc(input, levels, view, o, walks);
    const m = exitFiguresMc(input, levels, mk, o, walks);
    return { ...levels, current: pnlSurface(input).current, view: v, market: m };
  }
  const tau = view.driftSe !== undefined && view.driftSe > 0 ? view.driftSe : 0;
  if (tau > 0) {
    // the view's drift is uncertain (μ ~ N(μ₀, τ²), fixed over the path): exit figures are a
    // mixture over μ, composite Gauss-Legendre in z = (μ − μ₀)/τ (exitDriftNodes)
    const nodes = exitDriftNodes(view.drift, tau, opts.driftPanels);
    const ext = [nodes[0].drift, nodes[nodes.length - 1].drift].map((d) => ({ drift: d, vol: view.vol }));
    const g = exitGrid(input, levels, [...walks, ...ext], opts);
    return { ...levels, current: g.surface.current, view: exitFiguresPdeMixed(g, view.vol, nodes, q), market: exitFiguresPde(g, mk, q) };
  }
  const g = exitGrid(input, levels, walks, opts);
  return { ...levels, current: g.surface.current, view: exitFiguresPde(g, view, q), market: exitFiguresPde(g, mk, q) };
}

/** Half-width in z of the drift mixture for exits (outside it lies 2e-9 of the weight, renormalised). */
const EXIT_Z_END = 6;
/** Panels of 8 Gauss-Legendre nodes over [−6, 6] (tests compare with twice as many). */
export const EXIT_DRIFT_PANELS = 3;

/** The mixture over μ ~ N(drift, driftSe²) for exits: composite 8-point Gauss-Legendre in z on [−6, 6]. */
export function exitDriftNodes(drift: number, driftSe: number, panels = EXIT_DRIFT_PANELS): { drift: number; weight: number }[] {
  const hw = EXIT_Z_END / panels;
  const out: { drift: number; weight: number }[] = [];
  let total = 0;
  for (let p = 0; p < panels; p++) {
    const c = -EXIT_Z_END + (2 * p + 1) * hw;
    for (let k = 0; k < 8; k++) {
      const z = c + hw * GL8_X[k];
      const w = hw * GL8_W[k] * Math.exp(-0.5 * z * z);
      out.push({ drift: drift + driftSe * z, weight: w });
      total += w;
    }
  }
  for (const n of out) n.weight /= total;
  return out;
}

/** Exit figures under the view's predictive law: each figure (and the survival curve) mixed over the drift nodes. */
function exitFiguresPdeMixed(g: ExitGrid, vol: number, nodes: { drift: number; weight: number }[], q: number): ExitFigures {
  const i = g.i0;
  const mix: ExitFigures = { probTarget: 0, probStop: 0, probNeither: 0, expectedPnl: 0, medianExitYears: null, method: 'pde' };
  const surv = new Float64Array(g.t.length);
  for (const nd of nodes) {
    const w = { drift: nd.drift, vol };
    const u = solveExitBackward(g, w, q);
    mix.probTarget += nd.weight * u.uT[i];
    mix.probStop += nd.weight * u.uS[i];
    mix.probNeither += nd.weight * u.uN[i];
    mix.expectedPnl += nd.weight * u.uE[i];
    const s = solveExitForward(g, w, q);
    for (let k = 0; k < s.length; k++) surv[k] += nd.weight * s[k];
  }
  mix.medianExitYears = medianFromSurvival(g.t, surv);
  return mix;
}
