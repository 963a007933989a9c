/**
 * A logged request → the check form's values, for the edit action (the form opens pre-filled).
 *
 * Pure. The form holds dates, so spans (`3m`, `30d`) are turned into dates against the logged
 * check's day; `exp` (the default expiry) goes into each leg without its own. A comparison opens
 * as its first part (the form builds one check). What the form has no field for is listed in
 * `dropped`, so the form can say so instead of losing it silently.
 */
import { parse, resolveSpec, type CheckRequest, type ExpirySpec } from '../../verbs/ask.js';
import { FORM_LEGS_MAX, type FormValues, type LegValues } from './compose.js';

export interface Prefill {
  values: FormValues;
  /** what the form could not carry over, in words */
  dropped: string[];
}

/** A decimal fraction as the form's percent text: 0.285 → "28.5". */
export function percentText(x: number): string {
  return String(Number((x * 100).toPrecision(10)));
}

function numText(x: number): string {
  return String(Number(x.toPrecision(12)));
}

function dateOf(spec: ExpirySpec | undefined, asof: string): string | undefined {
  if (!spec) return undefined;
  return 'date' in spec ? spec.date : resolveSpec(spec, asof);
}

/** An exit level as the form's text: the sign only where it was written, `%` for a percentage. */
export function exitLevelText(l: { value: number; pct: boolean; signed: boolean }): string {
  const body = l.pct ? `${percentText(Math.abs(l.value))}%` : numText(Math.abs(l.value));
  return l.signed ? `${l.value < 0 ? '-' : '+'}${body}` : body;
}

/** The drift's uncertainty as written (`drift 9% ± 6%`, `9%±6%`, `9% +/- 6%`), in percent. */
export function driftUncertaintyOf(text: string): string | undefined {
  const m = /\bdrift\s+[+-]?(?:\d+(?:\.\d*)?|\.\d+)%\s*(?:±|\+\/-)\s*((?:\d+(?:\.\d*)?|\.\d+))%/i.exec(text);
  return m ? numText(Number(m[1])) : undefined;
}

/**
 * `text`: the logged request; `day`: the logged check's asof (yyyy-mm-dd), against which spans
 * are read. Undefined when the text is not a check or a comparison.
 */
export function prefillFromRequest(text: string, day: string): Prefill | undefined {
  const p = parse(text);
  if (!p.ok) return undefined;
  const r = p.request;
  let check: CheckRequest;
  let partText = text;
  const dropped: string[] = [];
  if (r.verb === 'check') check = r;
  else if (r.verb === 'compare' && r.checks && r.checks.length > 0) {
    check = r.checks[0];
    partText = r.parts[0]?.text ?? text;
    dropped.push(`parts 2–${r.checks.length} of the comparison (the form builds one check: this is part 1)`);
  } else return undefined;
  const t = check.terms;
  const asof = t.asof && t.asof !== 'today' ? t.asof : day;
  const legs: LegValues[] = [];
  for (const l of check.legs.slice(0, FORM_LEGS_MAX)) {
    const leg: LegValues = { qty: String(l.qty), type: l.kind };
    if (l.strike !== undefined) leg.strike = numText(l.strike);
    const exp = dateOf(l.expiry ?? t.exp, asof);
    if (l.kind !== 'shares' && exp) leg.expiry = exp;
    if (l.entry !== undefined) leg.entry = numText(l.entry);
    if (l.iv !== undefined) leg.iv = percentText(l.iv);
    legs.push(leg);
  }
  if (check.legs.length > FORM_LEGS_MAX) dropped.push(`legs ${FORM_LEGS_MAX + 1}–${check.legs.length} (the form has ${FORM_LEGS_MAX})`);
  const v: FormValues = { legs };
  if (t.on) v.symbol = t.on;
  if (t.spot !== undefined) v.spot = numText(t.spot);
  if (t.rate !== undefined) v.rate = percentText(t.rate);
  if (t.yield !== undefined) v.yield = percentText(t.yield);
  if (t.iv !== undefined) v.iv = percentText(t.iv);
  if (t.asof && t.asof !== 'today') v.asof = t.asof;
  if (t.drift !== undefined) {
    v.drift = percentText(t.drift);
    const se = driftUncertaintyOf(partText);
    if (se !== undefined) v.driftSe = se;
  }
  if (t.vol !== undefined) v.vol = percentText(t.vol);
  const h = dateOf(t.horizon, asof);
  if (h) v.horizon = h;
  if (t.style === 'american') v.style = 'american';
  if (t.mult !== undefined) v.mult = String(t.mult);
  if (t.jumps) {
    v.jumpRate = numText(t.jumps.intensity);
    v.jumpMean = percentText(t.jumps.mean);
    v.jumpSd = percentText(t.jumps.sd);
  }
  if (t.target) v.target = exitLevelText(t.target);
  if (t.stop) v.stop = exitLevelText(t.stop);
  // terms other engineers add to the grammar that the form has no field for
  const known = new Set(['spot', 'rate', 'yield', 'iv', 'exp', 'drift', 'vol', 'horizon', 'asof', 'mult', 'style', 'jumps', 'on', 'target', 'stop']);
  for (const k of Object.keys(t)) {
    if (!known.has(k) && (t as Record<string, unknown>)[k] !== undefined && !/^drift/i.test(k)) dropped.push(k);
  }
  return { values: v, dropped };
}
