/**
 * From a typed request to the core's input: defaults filled, dates turned into years, market
 * terms taken from a mark where the request is silent, and the checks that need more than one
 * term (horizon against expiries, expiry against asof, strike against spot) made here, with the
 * caret on the offending term (docs/design.md §2–3).
 *
 * Decisions (recorded in DEVELOPERS.md):
 * - asof: default today; `asof today` is the same.
 * - rate and yield: default 0 (continuously compounded), each with a note; a mark supplies them
 *   first when the request says `on SYMBOL`.
 * - spot: required (from the request or the mark).
 * - expiry: the leg's own, else `exp`; required for every option leg. Spans count from asof:
 *   `Nd` days, `Nw` weeks, `Nm` calendar months (day clamped to the month's end), `Ny` years.
 *   An expiry must be after asof and at most LIMITS.expiryYears years after it.
 * - iv: the leg's own, else the position's `iv`, else the mark's iv; required for every option leg.
 * - vol (view): `vol`, else the position's `iv` (or the mark's), else the iv of the option leg
 *   nearest the money (smallest |ln K/S|, first such leg on ties); a note says which.
 * - drift: default the rate, with the note that the outcome is then the risk-neutral one.
 * - horizon: default the earliest option expiry; must be after asof and on or before the
 *   earliest option expiry. A shares-only check has no expiry to default to, so it must name a
 *   horizon.
 * - mult 100, style european by default; strike/spot within [1/100, 100].
 * - time = calendar days / 365.
 */

import type { CheckInput, ExerciseStyle, Jumps, LegInput } from '../core/types.js';
import { MAX_YEAR, checkDate, daysBetween, resolveSpec, yearOf } from './dates.js';
import { EXAMPLES, SAMPLE, type ExampleKey } from './examples.js';
import { LIMITS } from './limits.js';
import { Reject, parse, toParseError, type Edit } from './parse.js';
import type { CheckRequest, ExitLevelSpec, ExpirySpec, IvRequest, ParseError, TouchRequest } from './types.js';

export interface MarkTerms {
  spot?: number;
  iv?: number;
  yield?: number;
  rate?: number;
  /** the view a mark may carry (`mark … drift 9% ± 6% vol 28%`, or `history … save`) */
  vol?: number;
  drift?: number;
  driftSe?: number;
  /** ISO time the mark was recorded */
  at: string;
  symbol: string;
}

export interface ResolveContext {
  /** yyyy-mm-dd */
  today: string;
  /** the channel's mark for the request's `on SYMBOL` */
  mark?: MarkTerms;
  /** ISO time now, for the mark's age (default: the start of `today`, UTC) */
  now?: string;
  /** the request text: when given, errors carry the user's own request corrected as the example */
  text?: string;
}

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

export interface ResolvedIv {
  kind: 'call' | 'put';
  price: number;
  S: number;
  K: number;
  T: number;
  r: number;
  q: number;
  expiry: string;
  asof: string;
  style: ExerciseStyle;
  /** Merton jumps: the implied vol is then the diffusion's vol */
  jumps?: Jumps;
}

export interface ResolvedTouch {
  level: number;
  S: number;
  T: number;
  q: number;
  view: { drift: number; vol: number; jumps?: Jumps; driftSe?: number };
  rate: number;
  by: string;
  asof: string;
}

type Fail = { ok: false; error: ParseError };

/** The drift's uncertainty as the view carries it: only when written and above zero (0 is a known drift). */
function driftSeOf(terms: { drift?: number; driftSe?: number }): { driftSe?: number } {
  return terms.drift !== undefined && terms.driftSe !== undefined && terms.driftSe > 0 ? { driftSe: terms.driftSe } : {};
}

/**
 * The view's drift and its uncertainty: the request's (a drift written without ± is known), else
 * the mark's (with its uncertainty), else the rate.
 */
function viewDrift(terms: { drift?: number; driftSe?: number }, base: Base, notes: string[]): { drift: number; se: { driftSe?: number } } {
  if (terms.drift !== undefined) return { drift: terms.drift, se: driftSeOf(terms) };
  const m = base.markView;
  if (m?.drift !== undefined) {
    const se = m.driftSe !== undefined && m.driftSe > 0 ? { driftSe: m.driftSe } : {};
    notes.push(`drift not given: the view uses the mark's drift, ${pct2(m.drift)}${se.driftSe ? ` ± ${pct2(se.driftSe)}` : ''}`);
    return { drift: m.drift, se };
  }
  notes.push('drift not given: the view uses the rate, so the outcome is the risk-neutral one');
  return { drift: base.rate, se: {} };
}

const DAY_MS = 86_400_000;

function pct(v: number): string {
  return `${Number((v * 100).toPrecision(10))}%`;
}

/** A decimal as a percentage with at most two decimals (estimates stored in a mark carry more digits than they deserve). */
function pct2(v: number): string {
  return `${Number((v * 100).toFixed(2))}%`;
}

function num(v: number): string {
  return String(Number(v.toPrecision(10)));
}

/** Length of the token starting at `at` in the text (1 when the text is unknown). */
function tokLen(text: string | undefined, at: number): number {
  if (!text) return 1;
  let j = at;
  while (j < text.length && !/\s/u.test(text[j])) j++;
  return Math.max(1, j - at);
}

class Resolver {
  constructor(
    readonly ctx: ResolveContext,
    readonly fallback: ExampleKey,
    readonly end: number,
  ) {}

  /** reject with the caret on the token at `at` */
  at(at: number | undefined, message: string, fix?: Edit): Reject {
    const pos = at ?? this.end;
    return new Reject(message, pos, tokLen(this.ctx.text, pos), fix, this.fallback);
  }

  /** reject for a missing term: caret just past the end, fix appends the term */
  missing(message: string, append: string): Reject {
    return new Reject(message, this.end + 1, 1, { at: this.end, length: 0, text: ` ${append}` }, this.fallback);
  }

  /** a replacement of the token at `at` (only when the text is known) */
  replace(at: number | undefined, text: string): Edit | undefined {
    if (at === undefined || !this.ctx.text) return undefined;
    return { at, length: tokLen(this.ctx.text, at), text };
  }

  /** where the value of the term word at `at` starts (the token after the word) */
  valueAt(at: number | undefined): number | undefined {
    const t = this.ctx.text;
    if (at === undefined || !t) return undefined;
    let j = at + tokLen(t, at);
    while (j < t.length && /\s/u.test(t[j])) j++;
    return j < t.length ? j : undefined;
  }

  /** reject with the caret under a term word and its value (e.g. `horizon 2027-04-15`) */
  term(at: number | undefined, message: string, fix?: Edit): Reject {
    const v = this.valueAt(at);
    const len = at !== undefined && v !== undefined ? v + tokLen(this.ctx.text, v) - at : 1;
    return new Reject(message, at ?? this.end, len, fix, this.fallback);
  }

  error(r: Reject): Fail {
    const text = this.ctx.text;
    if (!text) {
      return { ok: false, error: { message: r.message, at: Math.max(0, r.at), length: Math.max(1, r.length), example: EXAMPLES[r.fallback] } };
    }
    const accept = (candidate: string): boolean => {
      const p = parse(candidate);
      if (!p.ok) return false;
      const sub: ResolveContext = { ...this.ctx, text: undefined };
      const req = p.request;
      if (req.verb === 'check') return resolveCheck(req, sub).ok;
      if (req.verb === 'iv') return resolveIv(req, sub).ok;
      if (req.verb === 'touch') return resolveTouch(req, sub).ok;
      if (req.verb === 'compare') return (req.checks ?? []).every((c) => resolveCheck(c, sub).ok);
      return false;
    };
    return { ok: false, error: toParseError(text, r, accept) };
  }
}

interface Base {
  asof: string;
  spot: number;
  rate: number;
  yield: number;
  markIv?: number;
  /** the mark's view, used where the request gives no vol or drift */
  markView?: { vol?: number; drift?: number; driftSe?: number };
  notes: string[];
  symbol?: string;
}

/** asof, market terms and the mark: shared by every verb. */
function resolveBase(
  R: Resolver,
  terms: CheckRequest['terms'],
  termsAt: Partial<Record<string, number>>,
): Base {
  const { ctx } = R;
  const today = checkDate(ctx.today);
  if (!today.ok) throw R.at(0, `Kolmo's clock gave an invalid date (${String(ctx.today)}): ${today.reason}`);
  const asof = terms.asof === undefined || terms.asof === 'today' ? ctx.today : terms.asof;
  const notes: string[] = [];

  let mark: MarkTerms | undefined;
  if (terms.on !== undefined) {
    const sym = terms.on.toUpperCase();
    if (!ctx.mark || String(ctx.mark.symbol).toUpperCase() !== sym) {
      throw R.term(
        termsAt.on,
        `no mark for ${sym} in this channel: record one with mark ${sym} spot … or write the market terms`,
      );
    }
    mark = ctx.mark;
    const m = mark;
    const within = (v: number | undefined, lo: number, hi: number, open = false) =>
      v === undefined || (typeof v === 'number' && Number.isFinite(v) && (open ? v > lo : v >= lo) && v <= hi);
    const bad = !within(m.spot, 0, LIMITS.price, true)
      ? 'spot'
      : !within(m.iv, LIMITS.volMin, LIMITS.volMax)
        ? 'iv'
        : !within(m.rate, LIMITS.rateMin, LIMITS.rateMax)
          ? 'rate'
          : !within(m.yield, LIMITS.rateMin, LIMITS.rateMax)
            ? 'yield'
            : !within(m.vol, LIMITS.volMin, LIMITS.volMax)
              ? 'vol'
              : !within(m.drift, LIMITS.driftMin, LIMITS.driftMax) || !within(m.driftSe, 0, LIMITS.driftSeMax)
                ? 'drift'
                : undefined;
    if (bad) throw R.term(termsAt.on, `the mark for ${sym} has an unusable ${bad}: record it again with mark ${sym} ${bad} …`);
  }

  const taken: string[] = [];
  const pick = (k: 'spot' | 'rate' | 'yield'): number | undefined => {
    if (terms[k] !== undefined) return terms[k];
    if (mark && mark[k] !== undefined) {
      taken.push(k);
      return mark[k];
    }
    return undefined;
  };
  const spot = pick('spot');
  let rate = pick('rate');
  let q = pick('yield');
  const markIv = mark?.iv;

  if (mark) {
    const usedIv = markIv !== undefined && terms.iv === undefined;
    const parts = [...taken, ...(usedIv ? ['iv'] : [])];
    const when = Date.parse(mark.at);
    const now = ctx.now !== undefined ? Date.parse(ctx.now) : Date.parse(`${ctx.today}T00:00:00Z`);
    const age = Number.isFinite(when) && Number.isFinite(now) ? now - when : Infinity;
    const stamp = Number.isFinite(when) ? new Date(when).toISOString().slice(0, 16).replace('T', ' ') + ' UTC' : 'at an unknown time';
    const stale = age > DAY_MS ? ` — stale: older than a day` : '';
    notes.push(
      parts.length
        ? `market from the mark for ${mark.symbol.toUpperCase()} recorded ${stamp} (${parts.join(', ')})${stale}`
        : `the mark for ${mark.symbol.toUpperCase()} (recorded ${stamp}) was not needed: the request states every market term`,
    );
  }

  if (spot === undefined) {
    throw R.missing('spot missing: add spot 84.20 (or on SYMBOL for a recorded mark)', `spot ${SAMPLE.spot}`);
  }
  if (rate === undefined) {
    rate = 0;
    notes.push('rate not given: 0% used');
  }
  if (q === undefined) {
    q = 0;
    notes.push('yield not given: 0% used');
  }
  const markView = mark && (mark.vol !== undefined || mark.drift !== undefined) ? { vol: mark.vol, drift: mark.drift, driftSe: mark.driftSe } : undefined;
  return { asof, spot, rate, yield: q, markIv, ...(markView ? { markView } : {}), notes, symbol: terms.on?.toUpperCase() };
}

/** A date from a spec, checked to lie after asof and within LIMITS.expiryYears. */
/**
 * A date from a spec, checked to lie after asof and within LIMITS.expiryYears. `at` is the
 * position of the date itself (a leg's expiry) or, with `word`, of the term word before it.
 */
function dateAfterAsof(
  R: Resolver,
  spec: ExpirySpec,
  asof: string,
  at: number | undefined,
  what: string,
  word = false,
): { date: string; days: number } {
  const date = resolveSpec(spec, asof);
  const valueAt = word ? R.valueAt(at) : at;
  const bad = (message: string) => (word ? R.term(at, message, R.replace(valueAt, '3m')) : R.at(at, message, R.replace(valueAt, '3m')));
  if (yearOf(date) > MAX_YEAR) throw bad(`${what} ${date} is after ${MAX_YEAR}`);
  const days = daysBetween(asof, date);
  if (days <= 0) throw bad(`${what} ${date} is on or before asof ${asof}: it must be later`);
  if (days > LIMITS.expiryYears * 366) throw bad(`${what} ${date} is more than ${LIMITS.expiryYears} years after asof ${asof}`);
  return { date, days };
}

function checkStrike(R: Resolver, K: number, S: number, at: number | undefined, label: string): void {
  const ratio = K / S;
  if (!(ratio >= 1 / LIMITS.strikeToSpot && ratio <= LIMITS.strikeToSpot)) {
    throw R.at(
      at,
      `${label} ${num(K)} is ${ratio > 1 ? `${num(ratio)}×` : `1/${num(1 / ratio)} of`} spot ${num(S)}: expected within 1/${LIMITS.strikeToSpot} … ${LIMITS.strikeToSpot}× spot (a typo?)`,
      R.replace(at, num(S)),
    );
  }
}

function legLabel(leg: CheckRequest['legs'][number], i: number): string {
  const q = leg.qty > 0 ? `+${leg.qty}` : String(leg.qty);
  return `leg ${i + 1} (${q} ${leg.kind}${leg.strike !== undefined ? ` ${num(leg.strike)}` : ''})`;
}

function resolveCheckInner(req: CheckRequest, ctx: ResolveContext): ResolvedCheck {
  const end = req.end ?? (ctx.text ? ctx.text.trimEnd().length : 0);
  const R = new Resolver(ctx, 'check', end);
  const { terms, termsAt } = req;
  const base = resolveBase(R, terms, termsAt);
  const { asof, spot, notes } = base;

  const legs: LegInput[] = [];
  const legExpiries: (string | null)[] = [];
  let earliest: { date: string; days: number; leg: number } | undefined;

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

  // horizon
  let horizon: string;
  let horizonDays: number;
  if (terms.horizon) {
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

  // view vol
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

  const dv = viewDrift(terms, base, notes);
  const drift = dv.drift;

  const input: CheckInput = {
    market: { spot, rate: base.rate, yield: base.yield },
    legs,
    mult: terms.mult ?? 100,
    style: terms.style ?? 'european',
    horizonYears: horizonDays / 365,
    view: { ...(terms.jumps ? { drift, vol, jumps: { ...terms.jumps } } : { drift, vol }), ...dv.se },
  };
  checkSpread(R, input, req.termsAt);
  let marketVol = terms.iv ?? base.markIv;
  if (marketVol === undefined) {
    let bestD = Infinity;
    for (const l of legs) {
      if (l.kind === 'shares') continue;
      const d = Math.abs(Math.log(l.strike / spot));
      if (d < bestD) {
        bestD = d;
        marketVol = l.iv;
      }
    }
  }
  const exits = terms.target || terms.stop ? { ...(terms.target ? { target: terms.target } : {}), ...(terms.stop ? { stop: terms.stop } : {}) } : undefined;
  return { asof, horizon, input, legExpiries, notes, symbol: base.symbol, marketVol: marketVol ?? vol, ...(exits ? { exits } : {}) };
}

/**
 * The total variance of ln S over any leg's life (or the horizon, under the view) is capped at
 * LIMITS.maxLogVariance: beyond it the spot's range spans more orders of magnitude than double
 * precision holds for the integration and the jump series (a log-spot s.d. of 10 is already a
 * factor e^10 ≈ 22,000 either way).
 */
function checkSpread(R: Resolver, input: CheckInput, termsAt: CheckRequest['termsAt']): void {
  const j = input.view.jumps;
  const jumpVar = j && j.intensity > 0 ? j.intensity * (j.mean * j.mean + j.sd * j.sd) : 0;
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

/** Every number in a value is finite (the last guard before the core). */
function allFinite(x: unknown): boolean {
  if (typeof x === 'number') return Number.isFinite(x);
  if (Array.isArray(x)) return x.every(allFinite);
  if (x && typeof x === 'object') return Object.values(x).every(allFinite);
  return true;
}

function guard<T>(R: () => Resolver, f: () => T): T | Fail {
  try {
    const out = f();
    if (!allFinite(out)) throw new Error('a resolved figure is not a finite number');
    return out;
  } catch (e) {
    const r = R();
    if (e instanceof Reject) return r.error(e);
    return {
      ok: false,
      error: {
        message: `Kolmo could not resolve this request (internal error: ${e instanceof Error ? e.message : String(e)})`,
        at: 0,
        length: 1,
        example: EXAMPLES[r.fallback],
      },
    };
  }
}

function endOf(req: { end?: number }, ctx: ResolveContext): number {
  return req.end ?? (ctx.text ? ctx.text.trimEnd().length : 0);
}

/** Resolve a check (or one check of a comparison). Never throws. */
export function resolveCheck(
  req: CheckRequest,
  ctx: ResolveContext,
): { ok: true; check: ResolvedCheck } | { ok: false; error: ParseError } {
  const out = guard(
    () => new Resolver(ctx, 'check', endOf(req, ctx)),
    () => resolveCheckInner(req, ctx),
  );
  return 'ok' in out ? out : { ok: true, check: out };
}

/** Resolve an implied-vol request; the price must lie strictly inside the no-arbitrage bounds. Never throws. */
export function resolveIv(
  req: IvRequest,
  ctx: ResolveContext,
): { ok: true; iv: ResolvedIv; notes: string[] } | { ok: false; error: ParseError } {
  const mk = () => new Resolver(ctx, 'iv', endOf(req, ctx));
  const out = guard(mk, () => {
    const R = mk();
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
      ...(req.terms.jumps && req.terms.jumps.intensity > 0 ? { jumps: { ...req.terms.jumps } } : {}),
    };
    return { iv, notes: base.notes };
  });
  return 'ok' in out ? out : { ok: true, ...out };
}

/** Resolve a touch request: level, spot, time, view (drift defaults to the rate). Never throws. */
export function resolveTouch(
  req: TouchRequest,
  ctx: ResolveContext,
): { ok: true; touch: ResolvedTouch; notes: string[] } | { ok: false; error: ParseError } {
  const mk = () => new Resolver(ctx, 'touch', endOf(req, ctx));
  const out = guard(mk, () => {
    const R = mk();
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
      T: days / 365,
      q: base.yield,
      view: { ...(terms.jumps ? { drift, vol, jumps: { ...terms.jumps } } : { drift, vol }), ...dv.se },
      rate: base.rate,
      by: date,
      asof: base.asof,
    };
    return { touch, notes };
  });
  return 'ok' in out ? out : { ok: true, ...out };
}
