/** A check: its legs (expiry, iv, strike), the horizon, the view's vol and drift, and the spread cap. */
import { resolveSpec } from '../dates.js';
import type { CheckInput, LegInput } from '../../core/types.js';
import { hasJumps, jumpVariance } from '../../core/jumps.js';
import { SAMPLE } from '../examples.js';
import { LIMITS } from '../limits.js';
import type { CheckRequest, ExitLevelSpec, ParseError } from '../types.js';
import { checkStrike, dateAfterAsof, resolveBase, viewDrift } from './base.js';
import { type Resolver, num, pct, pct2, resolveWith, tokLen, type ResolveContext } from './context.js';

export interface ResolvedCheck {
  asof: string;
  horizon: string;
  input: CheckInput;
  /** ISO per leg, null for shares */
  legExpiries: (string | null)[];
  notes: string[];
  symbol?: string;
  /**
   * the market walk's vol (docs/design.md §4 `marketVol`): the request's iv, else the mark's, else the
   * iv of the option leg nearest the money; a check of shares alone: the view's vol
   */
  marketVol: number;
  /** exit levels as written (`target`, `stop`); made money once the position is valued */
  exits?: { target?: ExitLevelSpec; stop?: ExitLevelSpec };
}

/** An implied-vol question for the core (src/core/models.ts), with its dates. */
export function legLabel(leg: CheckRequest['legs'][number], i: number): string {
  const q = leg.qty > 0 ? `+${leg.qty}` : String(leg.qty);
  return `leg ${i + 1} (${q} ${leg.kind}${leg.strike !== undefined ? ` ${num(leg.strike)}` : ''})`;
}

type Base = ReturnType<typeof resolveBase>;
type Earliest = { date: string; days: number; leg: number } | undefined;

/** Each leg's expiry (after asof), iv and strike (near spot); the earliest option expiry. */
function resolveLegs(R: Resolver, req: CheckRequest, ctx: ResolveContext, base: Base) {
  const { terms, termsAt } = req;
  const { asof, spot } = base;
  const legs: LegInput[] = [];
  const legExpiries: (string | null)[] = [];
  let earliest: Earliest;

  req.legs.forEach((leg, i) => {
    const label = legLabel(leg, i);
    if (leg.kind === 'shares') {
      legs.push({ qty: leg.qty, kind: 'shares', strike: 0, years: 0, iv: 0, entry: leg.entry ?? null });
      legExpiries.push(null);
      return;
    }
    const spec = leg.expiry ?? terms.exp;
    if (!spec) {
      const at = leg.termsAt.strike;
      throw R.at(
        leg.at,
        `${label} has no expiry: write it after the strike (e.g. 2027-03-19 or 3m), or exp for all legs`,
        at !== undefined && ctx.text ? { at: at + tokLen(ctx.text, at), length: 0, text: ' 3m' } : undefined,
      );
    }
    const expAt = leg.expiry ? leg.termsAt.expiry : termsAt.exp;
    const { date, days } = dateAfterAsof(R, spec, asof, expAt, `the expiry of ${label},`, !leg.expiry);
    const iv = leg.iv ?? terms.iv ?? base.markIv;
    if (iv === undefined) {
      const at = leg.termsAt.entry ?? leg.termsAt.expiry ?? leg.termsAt.strike;
      throw R.at(
        leg.at,
        `${label} has no iv: write iv 28% after the leg, or iv for all legs after a market term, or use on SYMBOL with a mark`,
        at !== undefined && ctx.text ? { at: at + tokLen(ctx.text, at), length: 0, text: ' iv 28%' } : undefined,
      );
    }
    checkStrike(R, leg.strike!, spot, leg.termsAt.strike, `the strike of ${label}`);
    legs.push({ qty: leg.qty, kind: leg.kind, strike: leg.strike!, years: days / 365, iv, entry: leg.entry ?? null });
    legExpiries.push(date);
    if (!earliest || days < earliest.days) earliest = { date, days, leg: i };
  });

  return { legs, legExpiries, earliest };
}

/** The horizon: written (on or before the earliest expiry), else the earliest expiry. */
function resolveHorizon(R: Resolver, req: CheckRequest, asof: string, earliest: Earliest): { horizon: string; horizonDays: number } {
  const { terms, termsAt } = req;
  let horizon: string;
  let horizonDays: number;
  if (terms.horizon && 'minutes' in terms.horizon) {
    // a horizon in minutes or hours: fractional days from asof (the answer warns about it)
    const days = terms.horizon.minutes / (24 * 60);
    if (earliest && days > earliest.days) {
      const leg = req.legs[earliest.leg];
      throw R.term(termsAt.horizon, `the horizon is after ${legLabel(leg, earliest.leg)} expires on ${earliest.date}: the horizon must be on or before the earliest expiry`, R.replace(R.valueAt(termsAt.horizon), earliest.date));
    }
    horizon = resolveSpec(terms.horizon, asof);
    horizonDays = days;
  } else if (terms.horizon) {
    const h = dateAfterAsof(R, terms.horizon, asof, termsAt.horizon, 'the horizon', true);
    if (earliest && h.days > earliest.days) {
      const leg = req.legs[earliest.leg];
      throw R.term(
        termsAt.horizon,
        `the horizon ${h.date} is after ${legLabel(leg, earliest.leg)} expires on ${earliest.date}: the horizon must be on or before the earliest expiry`,
        R.replace(R.valueAt(termsAt.horizon), earliest.date),
      );
    }
    horizon = h.date;
    horizonDays = h.days;
  } else if (earliest) {
    horizon = earliest.date;
    horizonDays = earliest.days;
  } else {
    throw R.missing('a check of shares alone has no expiry to measure at: give a horizon, e.g. horizon 3m', 'horizon 3m');
  }

  return { horizon, horizonDays };
}

/** The view's vol: written, else the mark's view, the position's iv, the mark's iv, the iv of the leg nearest the money. */
function viewVol(R: Resolver, req: CheckRequest, base: Base, legs: LegInput[]): number {
  const { terms } = req;
  const { spot, notes } = base;
  let vol = terms.vol;
  if (vol === undefined && base.markView?.vol !== undefined) {
    vol = base.markView.vol;
    notes.push(`vol not given: the view uses the mark's vol, ${pct2(vol)}`);
  }
  if (vol === undefined) {
    if (terms.iv !== undefined) {
      vol = terms.iv;
      notes.push(`vol not given: the view uses the position's iv, ${pct(vol)}`);
    } else if (base.markIv !== undefined) {
      vol = base.markIv;
      notes.push(`vol not given: the view uses the mark's iv, ${pct(vol)}`);
    } else {
      let best = -1;
      let bestD = Infinity;
      legs.forEach((l, i) => {
        if (l.kind === 'shares') return;
        const d = Math.abs(Math.log(l.strike / spot));
        if (d < bestD) {
          bestD = d;
          best = i;
        }
      });
      if (best < 0) {
        throw R.missing('vol missing: a check of shares alone needs the view\'s vol, e.g. vol 25%', `vol ${SAMPLE.vol}`);
      }
      vol = legs[best].iv;
      notes.push(`vol not given: the view uses the iv of ${legLabel(req.legs[best], best)}, the leg nearest the money, ${pct(vol)}`);
    }
  }

  return vol;
}

/**
 * A trailing iv: written as the last term of the last leg while other option legs have none and
 * no position-level iv is written, it is the position's iv (the natural way to type a condor:
 * `+1 put 85 … +1 call 115 2027-03-19 iv 25% spot 100`); the note says so.
 */
function withTrailingIv(req: CheckRequest, notes: string[]): CheckRequest {
  const last = req.legs[req.legs.length - 1];
  if (req.terms.iv !== undefined || !last || last.kind === 'shares' || last.iv === undefined || last.termsAt.iv === undefined) return req;
  const lastTerm = Math.max(...Object.values(last.termsAt).filter((v): v is number => v !== undefined));
  const without = req.legs.filter((l) => l.kind !== 'shares' && l.iv === undefined);
  if (last.termsAt.iv !== lastTerm || without.length === 0) return req;
  notes.push(`iv ${pct(last.iv)} written after the last leg applies to every leg without its own iv (${without.length === 1 ? 'one leg' : `${without.length} legs`})`);
  return { ...req, terms: { ...req.terms, iv: last.iv } };
}

function resolveCheckInner(R: Resolver, typed: CheckRequest, ctx: ResolveContext): ResolvedCheck {
  const base = resolveBase(R, typed.terms, typed.termsAt);
  const { asof, spot, notes } = base;
  const req = withTrailingIv(typed, notes);
  const { terms } = req;
  const { legs, legExpiries, earliest } = resolveLegs(R, req, ctx, base);
  const { horizon, horizonDays } = resolveHorizon(R, req, asof, earliest);
  const vol = viewVol(R, req, base, legs);
  const dv = viewDrift(terms, base, notes);
  const drift = dv.drift;

  const input: CheckInput = {
    market: { spot, rate: base.rate, yield: base.yield },
    legs,
    mult: terms.mult ?? 100,
    style: terms.style ?? 'european',
    horizonYears: horizonDays / 365,
    view: { ...(terms.jumps ? { drift, vol, jumps: { ...terms.jumps } } : { drift, vol }), ...dv.se },
    // σ_m: the request's iv, else the mark's, else the leg nearest the money (shares alone: the view's vol)
    marketVol: marketVolOf(terms, base, legs, vol),
  };
  checkSpread(R, input, req.termsAt);
  const exits = terms.target || terms.stop ? { ...(terms.target ? { target: terms.target } : {}), ...(terms.stop ? { stop: terms.stop } : {}) } : undefined;
  return { asof, horizon, input, legExpiries, notes, symbol: base.symbol, marketVol: input.marketVol ?? vol, ...(exits ? { exits } : {}) };
}

/** The market walk's vol: the request's iv, else the mark's, else the iv of the option leg nearest the money, else the view's. */
function marketVolOf(terms: CheckRequest['terms'], base: Base, legs: LegInput[], vol: number): number {
  let marketVol = terms.iv ?? base.markIv;
  if (marketVol === undefined) {
    let bestD = Infinity;
    for (const l of legs) {
      if (l.kind === 'shares') continue;
      const d = Math.abs(Math.log(l.strike / base.spot));
      if (d < bestD) {
        bestD = d;
        marketVol = l.iv;
      }
    }
  }
  return marketVol ?? vol;
}

/**
 * The total variance of ln S over any leg's life (or the horizon, under the view) is capped at
 * LIMITS.maxLogVariance: beyond it the spot's range spans more orders of magnitude than double
 * precision holds for the integration and the jump series (a log-spot s.d. of 10 is already a
 * factor e^10 ≈ 22,000 either way).
 */
function checkSpread(R: Resolver, input: CheckInput, termsAt: CheckRequest['termsAt']): void {
  const j = input.view.jumps;
  const jumpVar = hasJumps(j) ? jumpVariance(j) : 0;
  const tau = input.view.driftSe ?? 0;
  let worst = input.view.vol * input.view.vol * input.horizonYears + jumpVar * input.horizonYears + tau * tau * input.horizonYears * input.horizonYears;
  for (const l of input.legs) if (l.kind !== 'shares') worst = Math.max(worst, (l.iv * l.iv + jumpVar) * l.years);
  if (worst > LIMITS.maxLogVariance) {
    const sd = Math.sqrt(worst);
    throw R.term(
      termsAt.jumps ?? termsAt.vol ?? termsAt.iv,
      `the spot's spread is too wide to compute reliably: a log-spot standard deviation of ${sd.toFixed(1)} over the position's life ` +
        `(at most ${Math.sqrt(LIMITS.maxLogVariance).toFixed(0)}): lower the jump rate or size, the vol, or bring the dates nearer`,
    );
  }
}

/** Resolve a check (or one check of a comparison). Never throws. */
export function resolveCheck(
  req: CheckRequest,
  ctx: ResolveContext,
): { ok: true; check: ResolvedCheck } | { ok: false; error: ParseError } {
  return resolveWith(ctx, 'check', req, (R) => ({ check: resolveCheckInner(R, req, ctx) }));
}

