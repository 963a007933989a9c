/** The terms every request resolves the same way: asof, spot, rate, yield, the mark, the view's drift; dates after asof; strikes near spot. */
import { MAX_YEAR, checkDate, daysBetween, resolveSpec, yearOf } from '../dates.js';
import { LIMITS } from '../limits.js';
import type { CheckRequest, ExpirySpec } from '../types.js';
import { SAMPLE } from '../examples.js';
import { type Resolver, pct2, num, type MarkTerms } from './context.js';
import { DAY_MS } from '../../core/units.js';

/** The drift's uncertainty as the view carries it: only when written and above zero (0 is a known drift). */
export function driftSeOf(terms: { drift?: number; driftSe?: number }): { driftSe?: number } {
  return terms.drift !== undefined && terms.driftSe !== undefined && terms.driftSe > 0 ? { driftSe: terms.driftSe } : {};
}

/**
 * The view's drift and its uncertainty: the request's (a drift written without ± is known), else
 * the mark's (with its uncertainty), else the rate.
 */
export function viewDrift(terms: { drift?: number; driftSe?: number }, base: Base, notes: string[]): { drift: number; se: { driftSe?: number } } {
  if (terms.drift !== undefined) return { drift: terms.drift, se: driftSeOf(terms) };
  const m = base.markView;
  if (m?.drift !== undefined) {
    const se = m.driftSe !== undefined && m.driftSe > 0 ? { driftSe: m.driftSe } : {};
    notes.push(`drift not given: the view uses the mark's drift, ${pct2(m.drift)}${se.driftSe ? ` ± ${pct2(se.driftSe)}` : ''}`);
    return { drift: m.drift, se };
  }
  notes.push('drift not given: the view uses the rate, so its view edge is 0');
  return { drift: base.rate, se: {} };
}

export interface Base {
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
export function resolveBase(
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
export function dateAfterAsof(
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

export function checkStrike(R: Resolver, K: number, S: number, at: number | undefined, label: string): void {
  const ratio = K / S;
  if (!(ratio >= 1 / LIMITS.strikeToSpot && ratio <= LIMITS.strikeToSpot)) {
    throw R.at(
      at,
      `${label} ${num(K)} is ${ratio > 1 ? `${num(ratio)}×` : `1/${num(1 / ratio)} of`} spot ${num(S)}: expected within 1/${LIMITS.strikeToSpot} … ${LIMITS.strikeToSpot}× spot (a typo?)`,
      R.replace(at, num(S)),
    );
  }
}

