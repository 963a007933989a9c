/**
 * The outcome engine: one check of a position — per-leg figures today, position totals, and the
 * distribution of the P&L at the horizon under the view and under the market walk (drift = rate,
 * the market vol), and the attribution of the expected P&L (DESIGN.md §4).
 *
 * P&L(S_h) = Σ qty × mult × (V_leg(S_h) − entry), with V_leg from the pricer seam (pricer.ts):
 * intrinsic value for legs expiring at the horizon, the model value with the leg's own iv and the
 * remaining life for live legs (sticky strike), the spot for shares. Money at the horizon,
 * undiscounted, no financing.
 *
 * Two exact-where-possible engines share one interface (outcome/engine.ts):
 * - every option leg expires at the horizon (outcome/linear-engine.ts): P&L is piecewise linear
 *   in S_h between strikes, so probabilities come from the spot cdf and expectations from partial
 *   expectations, exactly;
 * - otherwise (outcome/smooth-engine.ts): Gauss-Legendre integration in log-spot on a mesh that
 *   follows the local scale, split at the kinks, with crossings by Brent's root finder.
 * Quantiles are lower quantiles inf{y : P(P&L ≤ y) ≥ p} (outcome/figures.ts).
 */
import { walkDistribution } from './dist.js';
import { earlyExerciseGivenUp, nearestMoneyIv } from './outcome/attribution.js';
import { hasJumps } from './jumps.js';
import { dedupe } from './numeric/sorted.js';
import { buildCurves } from './outcome/curves.js';
import type { PnlEngine, PnlFn } from './outcome/engine.js';
import { quantileRecord, walkFigures } from './outcome/figures.js';
import { legsToday } from './outcome/legs-today.js';
import { atExpirySegments, LinearEngine, type Segment } from './outcome/linear-engine.js';
import type { LiveInfo } from './outcome/mesh.js';
import { positionPnl, type LegGroup } from './outcome/pnl.js';
import { sanitize } from './outcome/sanitize.js';
import { SmoothEngine } from './outcome/smooth-engine.js';
import { splitDist, type SplitDist } from './outcome/split-dist.js';
import { expiresBy, type LegModel } from './pricer.js';
import type { CheckCore, CheckInput, CheckNote, Curves, Outcome, Walk } from './types.js';

export interface RunOptions {
  /**
   * Integration refinement before expiry: panels per local scale (default 1). The benchmark
   * compares against 10 to measure the integration error.
   */
  refine?: number;
  /** also compute chance of profit, quantiles and worst-5% average under the market walk (default true) */
  marketFigures?: boolean;
  /**
   * also sample the curves the chart draws (default true); false leaves them empty, for a caller
   * that draws no chart (and the benchmark of the figures alone)
   */
  curves?: boolean;
}

const NO_CURVES = (): Curves => ({ spot: [], densityView: [], densityMarket: [], pnl: [], pnlDensity: { x: [], density: [], atoms: [] } });

/** How the P&L is integrated: exact segments at expiry, else the smooth engine's live legs. */
type EnginePlan = { segs: Segment[] } | { live: LiveInfo[]; ext: [number, number]; kinks: number[]; refine: number };

/**
 * The distinct strikes of the legs expiring at the horizon (exact: the at-expiry segments must put
 * every strike on the right side), and the plan of the engine.
 */
function planEngine(input: CheckInput, active: LegGroup[], c0: number, tolB: number, refine: number): { plan: EnginePlan; kinks: number[] } {
  const h = Math.max(0, input.horizonYears);
  const { spot, rate, yield: q } = input.market;
  const optionGroups = active.filter((g) => g.leg.kind !== 'shares');
  const liveGroups = optionGroups.filter((g) => !expiresBy(g.leg, h));
  const kinks = [...new Set(optionGroups.filter((g) => expiresBy(g.leg, h) && g.leg.strike > 0).map((g) => g.leg.strike))].sort((a, b) => a - b);
  if (liveGroups.length === 0) return { plan: { segs: atExpirySegments(active, kinks, c0, tolB) }, kinks };
  const live: LiveInfo[] = liveGroups.map((g) => {
    const tau = g.leg.years - h;
    return { centre: Math.log(g.leg.strike) - (rate - q) * tau, width: g.leg.iv * Math.sqrt(tau) };
  });
  const ext: [number, number] = [Math.log(spot) - 0.1, Math.log(spot) + 0.1];
  for (const k of strikesOf(input)) {
    ext[0] = Math.min(ext[0], Math.log(k) - 0.1);
    ext[1] = Math.max(ext[1], Math.log(k) + 0.1);
  }
  return { plan: { live, ext, kinks, refine }, kinks };
}

/** The distinct strikes of all option legs, ascending. */
function strikesOf(input: CheckInput): number[] {
  return dedupe(input.legs.filter((l) => l.kind !== 'shares' && l.strike > 0).map((l) => l.strike));
}

function engineFor(plan: EnginePlan, primary: SplitDist, twin: SplitDist, pf: PnlFn, extra?: SplitDist): PnlEngine {
  if ('segs' in plan) return new LinearEngine(plan.segs, primary, twin, pf);
  return new SmoothEngine({ view: primary, rn: twin, pf, kinks: plan.kinks, live: plan.live, extraRange: plan.ext, refine: plan.refine, ...(extra ? { extra } : {}) });
}

/** The notes on the models used, in the order the answer states them. */
function modelNotes(input: CheckInput, plan: EnginePlan, hasShares: boolean): CheckNote[] {
  const jumpsOn = hasJumps(input.view.jumps);
  const notes: CheckNote[] = [
    input.style === 'american' ? { code: 'values-american', jumps: jumpsOn } : jumpsOn ? { code: 'values-merton' } : { code: 'values-bsm' },
    'segs' in plan ? { code: 'outcome-exact' } : { code: 'outcome-integration' },
  ];
  if (hasShares) notes.push({ code: 'shares-legs' });
  return notes;
}

/** Runs one check: legs, position totals, outcome at the horizon and the chart curves. */
export function runCheck(input: CheckInput, options: RunOptions = {}): CheckCore {
  const refine = Math.max(1, options.refine ?? 1);
  const { market, view } = input;
  const { spot, rate, yield: q } = market;
  const h = Math.max(0, input.horizonYears);
  const model: LegModel = { market, style: input.style, jumps: view.jumps };
  // three walks on the one P&L function: the view; the market walk that prices the options
  // (drift = rate, σ_m), the engine's twin; and the view's vol at the rate, for the attribution
  const marketVol = input.marketVol ?? nearestMoneyIv(input.legs, spot) ?? view.vol;
  const sameVol = marketVol === view.vol;
  const marketWalk: Walk = { drift: rate, vol: marketVol, jumps: view.jumps };

  const today = legsToday(input, model, h);
  const { pf, active, c0, valuers } = positionPnl(input.legs, today.coefs, today.entries, model, h);
  const dView = walkDistribution(spot, h, q, view);
  const dMkt = walkDistribution(spot, h, q, marketWalk);
  const sView = splitDist(dView);
  const sMkt = splitDist(dMkt);
  const { plan, kinks } = planEngine(input, active, c0, pf.tolB, refine);
  // the view's vol at the rate: the market walk itself when no vol view is given (the vol part is
  // then exactly 0), the view itself when it is already at the rate; else a third walk whose
  // expectation comes from the same samples (or, at expiry, the same closed forms)
  const viewAtRate = view.drift === rate && !(view.driftSe !== undefined && view.driftSe > 0);
  const sAtRate = sameVol || viewAtRate ? undefined : splitDist(walkDistribution(spot, h, q, { drift: rate, vol: view.vol, jumps: view.jumps }));
  const eng = engineFor(plan, sView, sMkt, pf, sAtRate);
  const notes = modelNotes(input, plan, today.hasShares);

  // --- outcome figures: seeds at the P&L of the kinks, where the cdf may jump or bend
  const seeds = kinks.map(pf.f);
  const fv = walkFigures(eng, seeds, pf.scale);
  const expectedPnl = eng.expectView();
  const expectedMarket = eng.expectRiskNeutral();
  const expectedPnlAtRate = !sAtRate
    ? sameVol
      ? expectedMarket
      : expectedPnl
    : eng instanceof SmoothEngine
      ? eng.expectExtra()!
      : new LinearEngine((plan as { segs: Segment[] }).segs, sAtRate, sAtRate, pf).expectView();
  const viewEdge = expectedPnl - expectedPnlAtRate;
  // a crossing below a billionth of the spot is rounding in a P&L that is flat near zero there
  const breakevens = eng.breakevens().filter((b) => b > 1e-9 * spot);
  const ext = eng.extremes();

  // the same figures under the market walk (same P&L function, no second revaluation)
  let outcomeMarket: CheckCore['outcomeMarket'];
  if (options.marketFigures !== false) {
    const twin = eng instanceof SmoothEngine ? eng.twin() : engineFor(plan, sMkt, sMkt, pf);
    const fr = walkFigures(twin, seeds, pf.scale);
    outcomeMarket = { probProfit: fr.probProfit, expectedPnl: expectedMarket, pnlQuantiles: quantileRecord(fr.qs), tailMean05: fr.tailMean05 };
  }

  // the attribution: parts that add up to expectedPnl exactly (DESIGN.md §4)
  const { entryVsFair, carry } = today;
  const earlyExercise = earlyExerciseGivenUp(active, valuers, today.legs.map((l) => l.value), model, h, refine);
  const legIv = expectedMarket - (entryVsFair + carry + earlyExercise);

  const outcome: Outcome = {
    probProfit: fv.probProfit,
    expectedPnl,
    expectedPnlAtRate,
    viewEdge,
    attribution: { entryVsFair, carry, earlyExercise, legIv, vol: expectedPnlAtRate - expectedMarket, drift: viewEdge },
    pnlQuantiles: quantileRecord(fv.qs),
    tailMean05: fv.tailMean05,
    breakevens,
    maxGain: ext.max,
    maxLoss: ext.min,
  };
  const curves = options.curves === false ? NO_CURVES() : buildCurves({ dView, dMkt, pnlAt: pf.fAt, strikes: strikesOf(input), breakevens, spot, eng, figures: fv, tolY: 1e-9 * pf.scale });
  const result: CheckCore = { legs: today.legs, position: today.position, outcome, curves, notes, ...(outcomeMarket ? { outcomeMarket } : {}), marketVol };
  if (sanitize(result)) notes.push({ code: 'not-finite' });
  return result;
}
