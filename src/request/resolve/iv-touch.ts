/** An implied-vol request (the price inside the no-arbitrage bounds) and a touch request. */
import type { Jumps } from '../../core/types.js';
import { hasJumps } from '../../core/jumps.js';
import type { IvQuestion } from '../../core/models.js';
import { SAMPLE } from '../examples.js';
import type { IvRequest, ParseError, TouchRequest } from '../types.js';
import { checkStrike, dateAfterAsof, resolveBase, viewDrift } from './base.js';
import { num, pct, pct2, resolveWith, type ResolveContext } from './context.js';

export interface ResolvedIv extends IvQuestion {
  expiry: string;
  asof: string;
}

export interface ResolvedTouch {
  level: number;
  S: number;
  T: number;
  q: number;
  view: { drift: number; vol: number; jumps?: Jumps; driftSe?: number };
  rate: number;
  /** σ_m of the market figures: the request's iv, else the mark's, else the view's vol */
  marketVol: number;
  by: string;
  asof: string;
}

/** Resolve an implied-vol request; the price must lie strictly inside the no-arbitrage bounds. Never throws. */
export function resolveIv(
  req: IvRequest,
  ctx: ResolveContext,
): { ok: true; iv: ResolvedIv; notes: string[] } | { ok: false; error: ParseError } {
  return resolveWith(ctx, 'iv', req, (R) => {
    const base = resolveBase(R, req.terms, req.termsAt);
    const { date, days } = dateAfterAsof(R, req.expiry, base.asof, req.termsAt.expiry, 'the expiry');
    checkStrike(R, req.strike, base.spot, req.termsAt.strike, 'the strike');
    const T = days / 365;
    const S = base.spot;
    const K = req.strike;
    const style = req.terms.style ?? 'european';
    const fwdS = S * Math.exp(-base.yield * T);
    const pvK = K * Math.exp(-base.rate * T);
    let lo = req.kind === 'call' ? Math.max(0, fwdS - pvK) : Math.max(0, pvK - fwdS);
    let hi = req.kind === 'call' ? fwdS : pvK;
    if (style === 'american') {
      lo = Math.max(lo, req.kind === 'call' ? S - K : K - S);
      hi = req.kind === 'call' ? S : K;
    }
    const at = req.termsAt.price;
    const valueAt = R.valueAt(at);
    if (!(req.price > lo)) {
      throw R.term(
        at,
        `price ${num(req.price)} is at or below ${num(lo)}, the least this ${req.kind} can be worth (its value at zero vol): no vol gives it`,
        R.replace(valueAt, num(lo + Math.max(0.01, lo * 0.05))),
      );
    }
    if (!(req.price < hi)) {
      throw R.term(
        at,
        `price ${num(req.price)} is at or above ${num(hi)}, the most this ${req.kind} can be worth: no vol gives it`,
        R.replace(valueAt, num(lo + (hi - lo) / 4)),
      );
    }
    const iv: ResolvedIv = {
      kind: req.kind, price: req.price, S, K, T, r: base.rate, q: base.yield, expiry: date, asof: base.asof, style,
      ...(hasJumps(req.terms.jumps) ? { jumps: { ...req.terms.jumps } } : {}),
    };
    return { iv, notes: base.notes };
  });
}

/** Resolve a touch request: level, spot, time, view (drift defaults to the rate). Never throws. */
export function resolveTouch(
  req: TouchRequest,
  ctx: ResolveContext,
): { ok: true; touch: ResolvedTouch; notes: string[] } | { ok: false; error: ParseError } {
  return resolveWith(ctx, 'touch', req, (R) => {
    const { terms, termsAt } = req;
    const base = resolveBase(R, terms, termsAt);
    const { date, days } = dateAfterAsof(R, req.by, base.asof, termsAt.by, 'the date', true);
    checkStrike(R, req.level, base.spot, termsAt.level, 'the level');
    const notes = base.notes;
    let vol = terms.vol;
    if (vol === undefined && base.markView?.vol !== undefined) {
      vol = base.markView.vol;
      notes.push(`vol not given: the view uses the mark's vol, ${pct2(vol)}`);
    }
    if (vol === undefined) {
      vol = terms.iv ?? base.markIv;
      if (vol === undefined) throw R.missing('vol missing: touch needs the view\'s vol, e.g. vol 25%', `vol ${SAMPLE.vol}`);
      notes.push(`vol not given: the view uses the ${terms.iv !== undefined ? "request's" : "mark's"} iv, ${pct(vol)}`);
    }
    const dv = viewDrift(terms, base, notes);
    const drift = dv.drift;
    const touch: ResolvedTouch = {
      level: req.level,
      S: base.spot,
      marketVol: terms.iv ?? base.markIv ?? vol,
      T: days / 365,
      q: base.yield,
      view: { ...(terms.jumps ? { drift, vol, jumps: { ...terms.jumps } } : { drift, vol }), ...dv.se },
      rate: base.rate,
      by: date,
      asof: base.asof,
    };
    return { touch, notes };
  });
}
