/**
 * The view's predictive law when its drift is uncertain (docs/design.md §4): the user writes
 * `drift 9% ± 6%`, read as μ ~ N(μ₀, τ²) with μ₀ = 9%, τ = 6%, fixed over the path.
 *
 * At a horizon h the law is exact in closed form, with or without jumps: given μ the log-spot is
 * (a Poisson mixture of) normals whose means move by μh, so averaging over μ adds an independent
 * N(0, τ²h²) to every component:
 *   ln S_h ~ N(ln S + (μ₀ − q − σ²/2)h, σ²h + τ²h²)            (lognormal)
 *   component n: variance σ²h + nδ² + τ²h²                       (Merton jumps)
 * `walkDistribution` (dist.ts) applies this when the walk carries `driftSe`. Everything the
 * outcome engine measures at the horizon (chance of profit, quantiles, the P&L of American legs
 * revalued there) is a function of S_h alone, so it is exact under the predictive law too.
 *
 * A path-dependent figure (touch) is a genuine mixture over μ: E_μ[P(touch | μ)]. `driftNodes`
 * gives that mixture as weighted drifts: composite 8-point Gauss-Legendre in z = (μ − μ₀)/τ on
 * [−8.3, 8.3] (outside it lies less than 1e-16 of the weight), weights φ(z)·(panel weight)
 * renormalised to one. The panels are at most 1 wide in z and narrower when the figure turns
 * sharply in μ: a touch probability moves from 0 to 1 over a change in drift of about σ/√T, i.e.
 * over σ/(τ√T) in z, and the panel width is kept below half of that (at most 400 panels).
 * Gauss-Hermite, the textbook rule for E[f(Z)], puts its nodes about π/√n apart near the centre;
 * when τ√T is large against σ that spacing is coarser than the step and its error does not shrink
 * quickly, which is why the composite rule is used. A test checks the rule against one with
 * twice the panels.
 */
import { normCdf, normPdf } from './normal.js';
import { GL8 } from './numeric/gauss-legendre.js';
import { runCheck } from './outcome.js';
import { touchProb } from './touch.js';
import type { CheckInput, TouchInputs } from './types.js';

/** A drift with its weight in the mixture over μ. */
export interface DriftNode {
  drift: number;
  weight: number;
}

/** Half-width of the z range: Φ(−8.3) ≈ 5e-17. */
const Z_END = 8.3;
/** Upper bound on the number of panels (each of 8 nodes). */
const MAX_PANELS = 400;

// 8-point Gauss-Legendre on [−1, 1] (the core's rule, numeric/gauss-legendre.ts)
export const GL8_X = GL8.t;
export const GL8_W = GL8.w;

export interface DriftNodeOptions {
  /**
   * the width in z over which the integrand may turn (default 2: smooth); panels are kept at most
   * half of it wide, and at most 1
   */
  scale?: number;
  /** multiplies the number of panels (tests use 2 for the finer rule) */
  refine?: number;
}

/** Number of panels of the rule for a given scale and refinement. */
export function driftPanels(opts: DriftNodeOptions = {}): number {
  const scale = opts.scale !== undefined && opts.scale > 0 ? opts.scale : 2;
  const width = Math.min(1, scale / 2);
  const refine = Math.max(1, Math.floor(opts.refine ?? 1));
  return Math.min(MAX_PANELS, Math.ceil((2 * Z_END) / width)) * refine;
}

/**
 * The mixture over μ ~ N(drift, driftSe²) as weighted drifts (weights sum to one). A zero (or
 * non-positive, or non-finite) `driftSe` gives the single node {drift, 1}, so τ = 0 reproduces the
 * fixed-drift answer exactly.
 */
export function driftNodes(drift: number, driftSe: number, opts: DriftNodeOptions = {}): DriftNode[] {
  if (!(driftSe > 0) || !Number.isFinite(driftSe)) return [{ drift, weight: 1 }];
  const panels = driftPanels(opts);
  const hw = Z_END / panels; // half-width of a panel
  const nodes: DriftNode[] = [];
  let total = 0;
  for (let p = 0; p < panels; p++) {
    const c = -Z_END + (2 * p + 1) * hw;
    for (let k = 0; k < 8; k++) {
      const z = c + hw * GL8_X[k];
      const w = hw * GL8_W[k] * normPdf(z);
      nodes.push({ drift: drift + driftSe * z, weight: w });
      total += w;
    }
  }
  for (const n of nodes) n.weight /= total;
  return nodes;
}

/** E_μ[f(μ)] over the nodes. */
export function mixOverDrift(nodes: DriftNode[], f: (drift: number) => number): number {
  let s = 0;
  for (const n of nodes) s += n.weight * f(n.drift);
  return s;
}

/**
 * Chance that the spot touches `level` by T when the drift is uncertain (τ = o.driftSe): the
 * mixture over μ of the closed form (touch.ts). driftSe = 0 (or absent) is exactly `touchProb`.
 */
export function touchProbPredictive(o: TouchInputs, opts: Omit<DriftNodeOptions, 'scale'> = {}): number {
  const { S, level, T, drift, q, sigma } = o;
  const driftSe = o.driftSe ?? 0;
  if (!(driftSe > 0) || !(T > 0)) return touchProb(o);
  // the touch probability turns over a drift change of about σ/√T (plus the level's distance
  // in time when σ is tiny): in z units σ/(τ√T)
  const scale = Math.max(1e-3, sigma / (driftSe * Math.sqrt(T)));
  const nodes = driftNodes(drift, driftSe, { ...opts, scale });
  // one record for every node: only the drift changes
  const at: TouchInputs = { S, level, T, drift, q, sigma };
  const p = mixOverDrift(nodes, (mu) => {
    at.drift = mu;
    return touchProb(at);
  });
  return p < 0 ? 0 : p > 1 ? 1 : p;
}

/**
 * Chance of ending at or beyond `level` at T under the predictive law, exact (lognormal):
 * ln S_T ~ N(ln S + (μ₀ − q − σ²/2)T, σ²T + τ²T²) with τ = o.driftSe (absent: 0). Same
 * conventions as `probBeyondAtEnd`.
 */
export function probBeyondAtEndPredictive(o: TouchInputs): number {
  const { S, level, T, drift, q, sigma } = o;
  const driftSe = o.driftSe ?? 0;
  const b = Math.log(level / S);
  const dir = b >= 0 ? 1 : -1;
  const a = Math.abs(b);
  const t = T > 0 ? T : 0;
  const tau = driftSe > 0 ? driftSe : 0;
  const sd = Math.sqrt(sigma * sigma * t + tau * tau * t * t);
  if (!(sd > 1e-15)) return dir * (drift - q) * t >= a ? 1 : 0;
  const nt = dir * (drift - q - 0.5 * sigma * sigma) * t;
  return normCdf((nt - a) / sd);
}

/** The view's figures the uncertainty widens, for the line that sets them beside the known-drift ones. */
export interface SpreadFigures {
  probProfit: number;
  p05: number;
  p95: number;
}

/**
 * The same check with the drift taken as known (τ = 0): chance of profit and the P&L's p05 and p95,
 * to show how much the drift's uncertainty widens the outcome. null when the view has no
 * uncertainty. (One more run of the outcome engine, without the market column.)
 */
export function knownDriftFigures(input: CheckInput): SpreadFigures | null {
  if (!(input.view.driftSe !== undefined && input.view.driftSe > 0)) return null;
  const { driftSe: _drop, ...view } = input.view;
  const o = runCheck({ ...input, view }, { marketFigures: false }).outcome;
  return { probProfit: o.probProfit, p05: o.pnlQuantiles.p05, p95: o.pnlQuantiles.p95 };
}
