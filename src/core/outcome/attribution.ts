/**
 * The parts of the attribution that need more than today's values (DESIGN.md §4): the market vol
 * σ_m and the early exercise that holding American legs to the horizon gives up.
 */
import { walkDistribution } from '../dist.js';
import { expiresBy, legAsymptote, type LegModel } from '../pricer.js';
import type { LegInput } from '../types.js';
import type { PnlFn } from './engine.js';
import { LinearEngine, type Segment } from './linear-engine.js';
import type { LiveInfo } from './mesh.js';
import type { LegGroup } from './pnl.js';
import { SmoothEngine } from './smooth-engine.js';
import { splitDist, type SplitDist } from './split-dist.js';

/** The iv of the option leg nearest the money (smallest |ln K/S|, the first on ties); none for shares alone. */
export function nearestMoneyIv(legs: readonly LegInput[], spot: number): number | undefined {
  let best: LegInput | undefined;
  for (const l of legs) {
    if (l.kind === 'shares' || !(l.strike > 0)) continue;
    if (!best || Math.abs(Math.log(l.strike / spot)) < Math.abs(Math.log(best.strike / spot))) best = l;
  }
  return best?.iv;
}

/**
 * E[V(S_h)] of one leg's horizon value under a spot distribution: exact on the payoff when the
 * leg expires at the horizon, otherwise the integrating engine on the leg alone.
 */
function expectLegAtHorizon(leg: LegInput, v: (s: number) => number, model: LegModel, h: number, d: SplitDist, refine: number): number {
  const K = leg.strike;
  const as = legAsymptote(leg, model, h);
  const pf: PnlFn = { f: v, fx: (x) => v(Math.exp(x)), fAt: (_x, s) => v(s), A: as.intercept, B: as.slope, tolB: 1e-12, scale: Math.max(K, model.market.spot) };
  if (expiresBy(leg, h)) {
    const segs: Segment[] =
      leg.kind === 'call'
        ? [{ a: 0, b: K, alpha: 0, beta: 0 }, { a: K, b: Infinity, alpha: -K, beta: 1 }]
        : [{ a: 0, b: K, alpha: K, beta: -1 }, { a: K, b: Infinity, alpha: 0, beta: 0 }];
    return new LinearEngine(segs, d, d, pf).expectView();
  }
  const { rate, yield: q, spot } = model.market;
  const tau = leg.years - h;
  const live: LiveInfo[] = [{ centre: Math.log(K) - (rate - q) * tau, width: leg.iv * Math.sqrt(tau) }];
  const ext: [number, number] = [Math.min(Math.log(spot), Math.log(K)) - 0.1, Math.max(Math.log(spot), Math.log(K)) + 0.1];
  return new SmoothEngine({ view: d, rn: d, pf, kinks: [], live, extraRange: ext, refine }).expectView();
}

/**
 * Early exercise given up: Σ over American option groups of coef × (E at the rate with the leg's
 * own iv of its value at the horizon − fair value × e^{rh}). A European leg's discounted value is a
 * martingale under that walk, so its part is 0 by construction and is not computed.
 */
export function earlyExerciseGivenUp(
  groups: LegGroup[],
  valuers: ((s: number) => number)[],
  fairs: number[],
  model: LegModel,
  h: number,
  refine: number,
): number {
  if (model.style !== 'american') return 0;
  const { spot, rate, yield: q } = model.market;
  let total = 0;
  groups.forEach((g, k) => {
    if (g.leg.kind === 'shares') return;
    const d = splitDist(walkDistribution(spot, h, q, { drift: rate, vol: g.leg.iv, jumps: model.jumps }));
    const e = expectLegAtHorizon(g.leg, valuers[k], model, h, d, refine);
    total += g.coef * (e - fairs[g.index] * Math.exp(rate * h));
  });
  return total;
}
