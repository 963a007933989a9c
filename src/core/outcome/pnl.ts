/**
 * The P&L at the horizon as a function of the spot then:
 * P&L(S_h) = Σ qty × mult × (V_leg(S_h) − entry), with V_leg from the pricer seam (pricer.ts).
 * Identical legs are merged first, so that exact offsets vanish.
 */
import { bsmAcrossValue } from '../bsm.js';
import { legAcross, legAsymptote, legValuer, type LegModel } from '../pricer.js';
import type { LegInput } from '../types.js';
import type { PnlFn } from './engine.js';

/** A leg with the merged coefficient (qty × multiplier) of all legs identical to it. */
export interface LegGroup {
  leg: LegInput;
  coef: number;
  /** index of the first leg of the group in the input */
  index: number;
}

export interface PositionPnl {
  pf: PnlFn;
  /** the groups with a nonzero coefficient */
  active: LegGroup[];
  /** −Σ coef × entry */
  c0: number;
  /** each active group's per-share value at the horizon as a function of the spot then */
  valuers: ((s: number) => number)[];
}

/** Identical legs merged (same kind, strike, expiry and iv; all shares together). */
function groupLegs(legs: LegInput[], coefs: number[]): LegGroup[] {
  const groups = new Map<string, LegGroup>();
  legs.forEach((leg, i) => {
    const key = leg.kind === 'shares' ? 'shares' : `${leg.kind}|${leg.strike}|${leg.years}|${leg.iv}`;
    const g0 = groups.get(key);
    if (g0) g0.coef += coefs[i];
    else groups.set(key, { leg, coef: coefs[i], index: i });
  });
  return [...groups.values()].filter((g) => g.coef !== 0);
}

export function positionPnl(legs: LegInput[], coefs: number[], entries: number[], model: LegModel, h: number): PositionPnl {
  let c0 = 0;
  let absCoef = 0;
  legs.forEach((_, i) => {
    c0 -= coefs[i] * entries[i];
    absCoef += Math.abs(coefs[i]);
  });
  const active = groupLegs(legs, coefs);
  const terms = active.map((g) => ({ coef: g.coef, v: legValuer(g.leg, model, h), bsm: legAcross(g.leg, model, h) }));
  const f = (s: number): number => {
    let t = c0;
    for (const x of terms) t += x.coef * x.v(s);
    return t;
  };
  // the same sum with x = ln S known: log-spot valuers take it, the others S
  const fAt = (x: number, s: number): number => {
    let t = c0;
    for (const term of terms) t += term.coef * (term.bsm ? bsmAcrossValue(term.bsm, x, s) : term.v(s));
    return t;
  };
  const fx = (x: number): number => fAt(x, Math.exp(x));
  let A = c0;
  let B = 0;
  for (const g of active) {
    const as = legAsymptote(g.leg, model, h);
    A += g.coef * as.intercept;
    B += g.coef * as.slope;
  }
  const scale = absCoef > 0 ? absCoef * model.market.spot : Math.max(1, Math.abs(c0));
  return { pf: { f, fx, fAt, A, B, tolB: 1e-12 * Math.max(absCoef, 1e-300), scale }, active, c0, valuers: terms.map((t) => t.v) };
}
