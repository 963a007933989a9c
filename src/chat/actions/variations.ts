/**
 * The buttons' variations of a logged check → the text of the new request, so the new answer can
 * quote the typed request that would have produced it (people learn the grammar by pressing).
 *
 * Pure. The figures a variation starts from are the ones the logged check used (its summary:
 * spot, view vol, rate; per part for a comparison), not the ones it wrote: `vol +5 points` of a
 * check whose vol defaulted to the iv is that iv plus five points. The new value is written as a
 * term into every part of a comparison (each part from its own figures), replacing the term where
 * it was written and adding it where it was not, so a comparison across vols stays one across vols.
 *
 * A variation keeps the logged check's day (`asof`) when it was not today, so "spot −5%" changes
 * the spot and nothing else; "re-run on today's mark" is the one that moves the day.
 */
import { LIMITS, parse, parseCheckPart, type CheckRequest } from '../../verbs/ask.js';

export type Variation = 'spot_down' | 'spot_up' | 'vol_down' | 'vol_up' | 'drift_rate' | 'rerun_mark';
export const VARIATIONS: readonly Variation[] = ['spot_down', 'spot_up', 'vol_down', 'vol_up', 'drift_rate', 'rerun_mark'];

/** the step of each button (spot ±5%, vol ±5 points) */
export const SPOT_STEP = 0.05;
export const VOL_STEP = 0.05;

/** What a variation needs of a logged check (a LogEntry has all of it). */
export interface VariationBase {
  verb: string;
  text: string;
  /** the check's figures: spot, rate, vol, asof; a comparison's are in `parts` */
  summary: Record<string, unknown>;
}

export type VariationResult = { ok: true; text: string; what: string } | { ok: false; reason: string };

interface Figures {
  spot?: number;
  rate?: number;
  vol?: number;
  asof?: string;
}

function figuresOf(s: Record<string, unknown>): Figures {
  const n = (x: unknown) => (typeof x === 'number' && Number.isFinite(x) ? x : undefined);
  const f: Figures = {};
  const spot = n(s.spot);
  const rate = n(s.rate);
  const vol = n(s.vol);
  if (spot !== undefined) f.spot = spot;
  if (rate !== undefined) f.rate = rate;
  if (vol !== undefined) f.vol = vol;
  if (typeof s.asof === 'string' && /^\d{4}-\d{2}-\d{2}$/.test(s.asof)) f.asof = s.asof;
  return f;
}

/** A spot as the request writes it: two decimals (four below 1), trailing zeros dropped. */
export function spotText(x: number): string {
  return String(Number(x.toFixed(x >= 1 ? 2 : 4)));
}

/** A decimal rate or vol as a percentage term value: 0.045 → "4.5%". */
export function pctText(x: number): string {
  return `${String(Number((x * 100).toFixed(4)))}%`;
}

/** The term names a variation writes, and their values for one part. */
type Overrides = Partial<Record<'spot' | 'vol' | 'drift' | 'asof', string>>;

function overridesFor(kind: Variation, f: Figures, part: number): Overrides | string {
  const which = part > 0 ? ` (part ${part + 1})` : '';
  switch (kind) {
    case 'spot_down':
    case 'spot_up': {
      if (f.spot === undefined) return `the logged check has no spot${which}`;
      const s = f.spot * (kind === 'spot_up' ? 1 + SPOT_STEP : 1 - SPOT_STEP);
      if (!(s > 0) || s > LIMITS.price) return `a spot of ${spotText(s)} is outside what Kolmo takes`;
      return { spot: spotText(s) };
    }
    case 'vol_down':
    case 'vol_up': {
      if (f.vol === undefined) return `the logged check has no vol${which}`;
      const v = Math.round((f.vol + (kind === 'vol_up' ? VOL_STEP : -VOL_STEP)) * 1e6) / 1e6;
      if (v < LIMITS.volMin) return `the vol is ${pctText(f.vol)}${which}: five points lower is below the ${pctText(LIMITS.volMin)} floor`;
      if (v > LIMITS.volMax) return `the vol is ${pctText(f.vol)}${which}: five points higher is above the ${pctText(LIMITS.volMax)} cap`;
      return { vol: pctText(v) };
    }
    case 'drift_rate':
      if (f.rate === undefined) return `the logged check has no rate${which}`;
      return { drift: pctText(f.rate) };
    case 'rerun_mark':
      return {};
  }
}

/** Rewrites one check body (legs and terms, no verb): each override replaces its term or is appended. */
function rewriteBody(body: string, over: Overrides): { text: string } | { reason: string } {
  const p = parseCheckPart(body, 'check');
  if (!p.ok) return { reason: p.error.message };
  const { termToks, toks } = p.part;
  const edits: Array<{ from: number; to: number; text: string }> = [];
  const append: string[] = [];
  for (const [name, value] of Object.entries(over) as Array<[keyof Overrides, string]>) {
    const r = termToks[name];
    const piece = `${name} ${value}`;
    if (r) edits.push({ from: toks[r[0]].at, to: toks[r[1] - 1].at + toks[r[1] - 1].len, text: piece });
    else append.push(piece);
  }
  let text = body;
  for (const e of edits.sort((a, b) => b.from - a.from)) text = text.slice(0, e.from) + e.text + text.slice(e.to);
  return { text: [text.trim(), ...append].filter((s) => s !== '').join(' ') };
}

function stripVerb(s: string, verb: string): string {
  return s.replace(new RegExp(`^\\s*${verb}(?=\\s|$)`, 'i'), '').trim();
}

const WHAT: Record<Variation, string> = {
  spot_down: 'spot 5% lower',
  spot_up: 'spot 5% higher',
  vol_down: 'vol 5 points lower',
  vol_up: 'vol 5 points higher',
  drift_rate: 'drift at the rate',
  rerun_mark: 'on today’s mark',
};

/** Does the logged request take its market from a mark (`on SYMBOL`)? */
export function usesMark(text: string): boolean {
  const p = parse(text);
  if (!p.ok) return false;
  const r = p.request;
  if (r.verb === 'check') return r.terms.on !== undefined;
  if (r.verb === 'compare') return (r.checks ?? []).some((c) => c.terms.on !== undefined);
  return false;
}

/**
 * The request text of a variation of a logged check or comparison. `today` (yyyy-mm-dd) decides
 * whether the logged day must be written (`asof`) to keep it.
 */
export function variationText(base: VariationBase, kind: Variation, today: string): VariationResult {
  const p = parse(base.text);
  if (!p.ok) return { ok: false, reason: 'the logged request no longer reads' };
  const r = p.request;
  if (r.verb !== 'check' && r.verb !== 'compare') return { ok: false, reason: `a ${r.verb} request has no variations` };
  const summaries: Record<string, unknown>[] =
    r.verb === 'compare' ? (Array.isArray(base.summary.parts) ? (base.summary.parts as Record<string, unknown>[]) : []) : [base.summary];
  const bodies: string[] = r.verb === 'compare' ? r.parts.map((x) => stripVerb(x.text, 'check')) : [stripVerb(base.text, 'check')];
  if (summaries.length !== bodies.length) return { ok: false, reason: 'the log has no figures for every part of this comparison' };
  const checks: CheckRequest[] = r.verb === 'compare' ? (r.checks ?? []) : [r];
  if (kind === 'rerun_mark' && !checks.some((c) => c.terms.on !== undefined)) return { ok: false, reason: 'this check did not use a mark' };

  const out: string[] = [];
  const wanted: Overrides[] = [];
  for (let k = 0; k < bodies.length; k++) {
    const f = figuresOf(summaries[k]);
    const o = overridesFor(kind, f, k);
    if (typeof o === 'string') return { ok: false, reason: o };
    const own = checks[k].terms.asof;
    if (kind === 'rerun_mark') {
      // the day moves to today: a written asof becomes `asof today`
      if (own !== undefined && own !== 'today') o.asof = 'today';
    } else if (k === 0 && own === undefined && f.asof && f.asof !== today) {
      // keep the logged day (a written asof, or `asof today`, stays as written)
      o.asof = f.asof;
    }
    wanted.push(o);
    const b = rewriteBody(bodies[k], o);
    if ('reason' in b) return { ok: false, reason: b.reason };
    out.push(b.text);
  }
  const text = r.verb === 'compare' ? `compare ${out.join(' ; ')}` : out[0];

  // the new text must read, and say what was meant: each part's terms as set
  const back = parse(text);
  if (!back.ok) return { ok: false, reason: `the varied request does not read: ${back.error.message}` };
  const got: CheckRequest[] = back.request.verb === 'check' ? [back.request] : back.request.verb === 'compare' ? (back.request.checks ?? []) : [];
  if (got.length !== checks.length) return { ok: false, reason: 'the varied request lost a part' };
  for (let k = 0; k < got.length; k++) {
    const t = got[k].terms;
    const o = wanted[k];
    if (o.spot !== undefined && t.spot !== Number(o.spot)) return { ok: false, reason: 'the varied request does not carry the new spot' };
    if (o.vol !== undefined && Math.abs((t.vol ?? NaN) * 100 - parseFloat(o.vol)) > 1e-9) return { ok: false, reason: 'the varied request does not carry the new vol' };
    if (o.drift !== undefined && Math.abs((t.drift ?? NaN) * 100 - parseFloat(o.drift)) > 1e-9) return { ok: false, reason: 'the varied request does not carry the new drift' };
    if (JSON.stringify(got[k].legs.map(({ at: _a, termsAt: _t, ...l }) => l)) !== JSON.stringify(checks[k].legs.map(({ at: _a, termsAt: _t, ...l }) => l))) {
      return { ok: false, reason: 'the varied request changed the legs' };
    }
  }
  return { ok: true, text, what: WHAT[kind] };
}
