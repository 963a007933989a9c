/**
 * Per-leg figures today (value, Greeks, chances of finishing in the money under both walks),
 * the position totals and the first two parts of the attribution (entry vs fair, carry).
 */
import { cdf as spotCdf, sf as spotSf, walkDistribution } from '../dist.js';
import { legGreeks, type LegModel } from '../pricer.js';
import type { CheckInput, LegResult, PositionTotals } from '../types.js';

export interface LegsToday {
  legs: LegResult[];
  position: PositionTotals;
  /** qty × multiplier of each leg (shares: multiplier 1) */
  coefs: number[];
  /** entry price per share of each leg (its fair value when none was given) */
  entries: number[];
  /** Σ coef × (fair value − entry) */
  entryVsFair: number;
  /** Σ coef × fair value × (e^{rh} − 1) for options, coef × S × (e^{(r−q)h} − 1) for shares */
  carry: number;
  hasShares: boolean;
}

/** Chances of finishing in the money, risk-neutral (the leg's own iv) and under the view. */
function probItm(leg: CheckInput['legs'][number], input: CheckInput): { pRn: number; pView: number } {
  // shares have no strike: their in-the-money probabilities are shown as 1 (never NaN)
  if (leg.kind === 'shares') return { pRn: 1, pView: 1 };
  const { spot, rate, yield: q } = input.market;
  const view = input.view;
  const T = Math.max(0, leg.years);
  const dR = walkDistribution(spot, T, q, { drift: rate, vol: leg.iv, jumps: view.jumps });
  const dV = walkDistribution(spot, T, q, view);
  if (leg.kind === 'call') return { pRn: spotSf(dR, leg.strike), pView: spotSf(dV, leg.strike) };
  return { pRn: spotCdf(dR, leg.strike), pView: spotCdf(dV, leg.strike) };
}

export function legsToday(input: CheckInput, model: LegModel, h: number): LegsToday {
  const { spot, rate, yield: q } = input.market;
  const legs: LegResult[] = [];
  const pos: PositionTotals = { cost: 0, value: 0, delta: 0, gamma: 0, vega: 0, theta: 0, rho: 0 };
  const coefs: number[] = [];
  const entries: number[] = [];
  let entryVsFair = 0;
  let carry = 0;
  let hasShares = false;
  for (const leg of input.legs) {
    const g = legGreeks(leg, model);
    const coef = leg.qty * (leg.kind === 'shares' ? 1 : input.mult);
    const entry = leg.entry ?? g.value;
    coefs.push(coef);
    entries.push(entry);
    const { pRn, pView } = probItm(leg, input);
    entryVsFair += coef * (g.value - entry);
    if (leg.kind === 'shares') {
      hasShares = true;
      carry += coef * spot * Math.expm1((rate - q) * h);
    } else carry += coef * g.value * Math.expm1(rate * h);
    // written out: an object spread of the Greeks costs more than the rest of the leg together
    legs.push({ value: g.value, delta: g.delta, gamma: g.gamma, vega: g.vega, theta: g.theta, rho: g.rho, probItmRiskNeutral: pRn, probItmView: pView });
    pos.cost += coef * entry;
    pos.value += coef * g.value;
    pos.delta += coef * g.delta;
    pos.gamma += coef * g.gamma;
    pos.vega += coef * g.vega;
    pos.theta += coef * g.theta;
    pos.rho += coef * g.rho;
  }
  return { legs, position: pos, coefs, entries, entryVsFair, carry, hasShares };
}
