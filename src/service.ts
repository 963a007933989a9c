/**
 * The engine seam every shell uses: text in, Reply out. Parses, resolves against the channel's
 * marks, computes, logs the check (before the shell posts it) and returns the answer parts.
 * Never throws: anything unexpected becomes a rejection the asker sees.
 *
 * The channel's memory (the log and the marks, src/store) is read and written only here:
 * - check, compare, iv and touch are logged (again logs the request it actually ran, so `again`
 *   of it works); help, log, mark listings and `mark SYMBOL …` are not (a mark records its own
 *   who and when).
 * - a store that cannot be written (read-only, full, busy) never costs the answer: it is answered
 *   and flagged in `warnings` as not logged.
 * - an entry of another channel is answered exactly like a number that does not exist.
 */
import { runCheck } from './core/outcome.js';
import { impliedVol } from './core/iv.js';
import { americanImpliedVol } from './core/american.js';
import { mertonImpliedVol } from './core/merton.js';
import { probBeyondAtEnd, touchProb } from './core/touch.js';
import { touchProbJumps } from './core/touch-jumps.js';
import { cdf as spotCdf, sf as spotSf, walkDistribution } from './core/dist.js';

import type { CheckInput } from './core/types.js';
import { formatError, parse } from './request/parse.js';
import { resolveCheck, resolveIv, resolveTouch, type MarkTerms, type ResolvedCheck } from './request/resolve.js';
import { helpText } from './request/help.js';
import { applyAgain } from './request/again.js';
import { EXAMPLES } from './request/examples.js';
import type { AgainRequest, CheckRequest, CompareRequest, LogRequest, MarkRequest, ParseError, Request } from './request/types.js';
import { CAUTION, type Answer, type Rejection, type Reply } from './reply.js';
import type { CheckAssembly, CheckJson, LegJson } from './result.js';
import { checkHeadline, checkText, positionWords } from './report/text.js';
import { compareChartInput, compareHeadline, compareText, cut, type ComparePart } from './report/compare.js';
import { ageWords, isStale, logText, marksText, whenUtc } from './report/log.js';
import { level, money, num, pct, rate, shortDate } from './report/format.js';
import { checkNoteText } from './report/notes.js';
import { StoreError, type CheckSummary, type LogEntry, type Mark, type Store } from './store/store.js';

/** Monte Carlo paths for touch under jumps (standard error ≤ 0.25 percentage points). */
const TOUCH_MC_PATHS = 40_000;

export interface AskContext {
  /** the channel (workspace channel id, `cli`, `console`): the log and the marks are per channel */
  channel: string;
  user: string;
  /** the time of the request (default: the clock); drives `asof` defaults and the marks' age */
  now?: Date;
  store?: Store | null;
  /** answering in a workspace: log listings return thread links apart (Answer.links) instead of inline */
  inWorkspace?: boolean;
}

/** Most checks in one comparison (the comparison chart draws six). */
export const COMPARE_MAX = 6;

function isoDay(d: Date): string {
  return d.toISOString().slice(0, 10);
}

function reject(text: string, e: ParseError): Rejection {
  return { kind: 'rejected', message: formatError(text, e), at: e.at };
}

function answer(partial: Omit<Answer, 'kind' | 'caution' | 'warnings' | 'ephemeral'> & Partial<Answer>): Answer {
  return { kind: 'answer', caution: CAUTION, warnings: [], ephemeral: false, ...partial };
}

/** Runs the core for a resolved check and assembles the JSON result (DESIGN.md §4). */
export function computeCheck(rc: ResolvedCheck): CheckAssembly {
  const input: CheckInput = rc.input;
  const core = runCheck(input);
  // the risk-neutral column comes from the same run (same P&L function, the twin's distribution)
  const rn = core.outcomeRiskNeutral!; // computed by default (RunOptions.riskNeutralFigures)
  const legs: LegJson[] = input.legs.map((l, i) => {
    const g = core.legs[i];
    const isOpt = l.kind !== 'shares';
    return {
      qty: l.qty,
      type: l.kind,
      strike: isOpt ? l.strike : null,
      expiry: rc.legExpiries[i] ?? null,
      years: isOpt ? l.years : null,
      iv: isOpt ? l.iv : null,
      entry: l.entry ?? g.value,
      entryGiven: l.entry !== null,
      value: g.value,
      delta: g.delta,
      gamma: g.gamma,
      vega: g.vega,
      theta: g.theta,
      rho: g.rho,
      probItmRiskNeutral: isOpt ? g.probItmRiskNeutral : null,
      probItmView: isOpt ? g.probItmView : null,
    };
  });
  const jumps = input.view.jumps && input.view.jumps.intensity > 0 ? input.view.jumps : undefined;
  const json: CheckJson = {
    kind: 'check',
    ...(rc.symbol ? { symbol: rc.symbol } : {}),
    asof: rc.asof,
    horizon: rc.horizon,
    horizonYears: input.horizonYears,
    market: { spot: input.market.spot, rate: input.market.rate, yield: input.market.yield },
    view: { drift: input.view.drift, vol: input.view.vol, model: jumps ? 'merton-jumps' : 'lognormal', ...(jumps ? { jumps } : {}) },
    style: input.style,
    mult: input.mult,
    notes: [...rc.notes, ...core.notes.map(checkNoteText)],
    legs,
    position: core.position,
    outcome: core.outcome,
    outcomeRiskNeutral: {
      probProfit: rn.probProfit,
      expectedPnl: rn.expectedPnl,
      pnlQuantiles: rn.pnlQuantiles,
      tailMean05: rn.tailMean05,
    },
  };
  return { json, curves: core.curves };
}

/** What the chart reads from a check (a plain object: it may cross a worker boundary). */
export function chartInputOf(a: CheckAssembly) {
  const c = a.json;
  return {
    title: positionWords(c),
    horizon: c.horizon,
    view: { drift: c.view.drift, vol: c.view.vol, ...(c.view.jumps ? { jumps: c.view.jumps } : {}) },
    spot: c.market.spot,
    strikes: [...new Set(c.legs.filter((l) => l.strike !== null).map((l) => l.strike as number))].sort((x, y) => x - y),
    breakevens: c.outcome.breakevens,
    probProfit: c.outcome.probProfit,
    expectedPnl: c.outcome.expectedPnl,
    curves: a.curves,
  };
}

// ---------------------------------------------------------------------------------------------
// Plumbing

/** The request's time and day, once. */
interface Env {
  ctx: AskContext;
  now: Date;
  today: string;
  nowIso: string;
}

function envOf(ctx: AskContext): Env {
  const now = ctx.now instanceof Date && Number.isFinite(ctx.now.getTime()) ? ctx.now : new Date();
  return { ctx, now, today: isoDay(now), nowIso: now.toISOString() };
}

/** A request Kolmo will not answer: thrown inside the verbs, returned by askSync. */
class Refused extends Error {
  constructor(readonly reply: Rejection) {
    super(reply.message);
  }
}

function refuse(text: string, e: ParseError): Refused {
  return new Refused(reject(text, e));
}

/** A refusal that is not about reading the request (no such check, the log unavailable, …). */
function refuseFact(text: string, e: ParseError): Refused {
  const r = reject(text, e);
  return new Refused({ ...r, message: r.message.replace(/^Kolmo could not read this request:/, 'Kolmo cannot answer this request:') });
}

function why(err: unknown): string {
  return err instanceof Error ? err.message : String(err);
}

/** Runs a store call; a StoreError becomes a refusal with `what` in front of its message. */
function storeCall<T>(text: string, what: string, at: number, fn: () => T): T {
  try {
    return fn();
  } catch (err) {
    if (err instanceof StoreError) {
      throw refuseFact(text, { message: `${what}: ${err.message}`, at, length: 1, example: 'help' });
    }
    throw err;
  }
}

function needStore(text: string, env: Env, verb: string): Store {
  const s = env.ctx.store;
  if (!s) {
    throw refuseFact(text, {
      message: `${verb} needs the channel's log, and this session has none (the log could not be opened, or it was turned off)`,
      at: 0,
      length: verb.length,
      example: 'help',
    });
  }
  return s;
}

/** A computed answer and what the log keeps of it. */
interface Computed {
  answer: Answer;
  summary: CheckSummary;
}

// ---------------------------------------------------------------------------------------------
// Marks

function termsOfMark(m: Mark): MarkTerms {
  return { symbol: m.symbol, spot: m.spot, iv: m.iv, yield: m.yield, rate: m.rate, at: m.at };
}

/**
 * The channel's mark for `on SYMBOL` (undefined when the request has no `on`). A missing mark or
 * an unreadable log refuses the request with the caret on the symbol.
 */
function markFor(text: string, env: Env, symbol: string | undefined, at: number | undefined): Mark | undefined {
  if (!symbol) return undefined;
  const sym = symbol.toUpperCase();
  const where = at ?? 0;
  const example = `mark ${sym} spot 84.20 iv 31% yield 1.2%`;
  const store = env.ctx.store;
  if (!store) {
    throw refuseFact(text, {
      message: `no mark for ${sym}: this session has no log to keep marks in; write the market terms instead (spot, iv, rate, yield)`,
      at: where,
      length: symbol.length + 3,
      example: EXAMPLES.check,
    });
  }
  const m = storeCall(text, `the marks of this channel could not be read`, where, () => store.getMark(env.ctx.channel, sym));
  if (!m) {
    throw refuseFact(text, {
      message: `no mark for ${sym} in this channel: record one with \`mark ${sym} spot …\` or write the market terms`,
      at: where,
      length: symbol.length + 3,
      example,
    });
  }
  return m;
}

function markAge(m: Mark, now: Date): string {
  const w = ageWords(now.getTime() - Date.parse(m.at));
  return w === 'just now' ? 'just now' : `${w} old`;
}

/** The line every answer that used a mark carries: who recorded it, when, its age, stale or not. */
function markLine(m: Mark, now: Date): string {
  const stale = isStale(m.at, now);
  return `Mark ${m.symbol}: recorded ${whenUtc(m.at)} UTC by ${m.user}, ${markAge(m, now)}${stale ? ' — STALE: older than a day; record a fresh one with `mark ' + m.symbol + ' spot …`' : ''}.`;
}

function markJson(m: Mark, now: Date) {
  return {
    symbol: m.symbol,
    user: m.user,
    at: m.at,
    ageMinutes: Math.max(0, Math.floor((now.getTime() - Date.parse(m.at)) / 60_000)) || 0,
    stale: isStale(m.at, now),
  };
}

function markTermsWords(m: Pick<Mark, 'spot' | 'iv' | 'yield' | 'rate'>): string {
  const w: string[] = [];
  if (m.spot !== undefined) w.push(`spot ${level(m.spot)}`);
  if (m.iv !== undefined) w.push(`iv ${rate(m.iv)}`);
  if (m.yield !== undefined) w.push(`yield ${rate(m.yield)}`);
  if (m.rate !== undefined) w.push(`rate ${rate(m.rate)}`);
  return w.join(' · ');
}

// ---------------------------------------------------------------------------------------------
// The verbs that compute (and are logged)

function checkSummary(c: CheckJson): CheckSummary {
  return {
    position: positionWords(c),
    probProfit: c.outcome.probProfit,
    expectedPnl: c.outcome.expectedPnl,
    viewEdge: c.outcome.viewEdge,
    asof: c.asof,
    horizon: c.horizon,
    spot: c.market.spot,
    rate: c.market.rate,
    yield: c.market.yield,
    drift: c.view.drift,
    vol: c.view.vol,
  };
}

function doCheck(text: string, req: CheckRequest, env: Env): Computed {
  const mark = markFor(text, env, req.terms.on, req.termsAt.on);
  const r = resolveCheck(req, { today: env.today, now: env.nowIso, text, ...(mark ? { mark: termsOfMark(mark) } : {}) });
  if (!r.ok) throw refuse(text, r.error);
  const asm = computeCheck(r.check);
  const stale = mark ? isStale(mark.at, env.now) : false;
  const a = answer({
    verb: 'check',
    headline: checkHeadline(asm.json) + (stale ? ` · mark ${mark!.symbol} stale` : ''),
    text: checkText(asm.json) + (mark ? `\n${markLine(mark, env.now)}` : ''),
    json: { ...asm.json, ...(mark ? { mark: markJson(mark, env.now) } : {}) } as unknown as Record<string, unknown>,
    chart: chartInputOf(asm),
  });
  return { answer: a, summary: checkSummary(asm.json) };
}

function doCompare(text: string, req: CompareRequest, env: Env): Computed {
  if (req.parts.length > COMPARE_MAX) {
    const extra = req.parts[COMPARE_MAX];
    throw refuse(text, {
      message: `a comparison takes at most ${COMPARE_MAX} checks and this one has ${req.parts.length}: drop the parts from here on, or split it into two comparisons`,
      at: extra.at,
      length: Math.max(1, extra.text.length),
      example: text.slice(0, extra.at).replace(/\s*;\s*$/, '').trim() || EXAMPLES.compare,
    });
  }
  const checks = req.checks ?? [];
  if (checks.length !== req.parts.length) {
    throw refuse(text, { message: 'Kolmo could not read the parts of this comparison', at: 0, length: 7, example: EXAMPLES.compare });
  }
  const parts: ComparePart[] = [];
  const asms: CheckAssembly[] = [];
  const marks = new Map<string, Mark>();
  checks.forEach((c, k) => {
    const mark = markFor(text, env, c.terms.on, c.termsAt.on);
    if (mark) marks.set(mark.symbol, mark);
    const r = resolveCheck(c, { today: env.today, now: env.nowIso, text, ...(mark ? { mark: termsOfMark(mark) } : {}) });
    if (!r.ok) throw refuse(text, { ...r.error, message: `part ${k + 1} of the comparison: ${r.error.message}` });
    const asm = computeCheck(r.check);
    asms.push(asm);
    parts.push({ label: req.parts[k].text, json: asm.json });
  });
  const ms = [...marks.values()];
  const stale = ms.filter((m) => isStale(m.at, env.now));
  const a = answer({
    verb: 'compare',
    headline: compareHeadline(parts) + (stale.length ? ` · mark ${stale.map((m) => m.symbol).join(', ')} stale` : ''),
    text: [compareText(parts), ...ms.map((m) => markLine(m, env.now))].join('\n'),
    json: {
      kind: 'compare',
      checks: parts.map((p) => p.json),
      ...(ms.length ? { marks: ms.map((m) => markJson(m, env.now)) } : {}),
    },
    chart: compareChartInput(parts, asms.map((x) => x.curves)),
  });
  const first = parts[0].json;
  return {
    answer: a,
    summary: {
      position: `compare ${parts.length}: ${positionWords(first)}`,
      parts: parts.map((p) => checkSummary(p.json)),
    },
  };
}

function doIv(text: string, req: Extract<Request, { verb: 'iv' }>, env: Env): Computed {
  const mark = markFor(text, env, req.terms.on, req.termsAt.on);
  const r = resolveIv(req, { today: env.today, now: env.nowIso, text, ...(mark ? { mark: termsOfMark(mark) } : {}) });
  if (!r.ok) throw refuse(text, r.error);
  const v = r.iv;
  const s = v.style === 'american'
    ? americanImpliedVol(v.kind, v.price, v.S, v.K, v.T, v.r, v.q, v.jumps)
    : v.jumps
      ? mertonImpliedVol(v.kind, v.price, v.S, v.K, v.T, v.r, v.q, v.jumps)
      : impliedVol(v.kind, v.price, v.S, v.K, v.T, v.r, v.q);
  const ivModel = v.style === 'american'
    ? `American exercise (finite differences on the backward equation${v.jumps ? ' with Merton jumps; the iv is the diffusion vol' : ''})`
    : v.jumps
      ? 'Merton jump diffusion (European); the iv is the diffusion vol'
      : 'Black-Scholes-Merton (European)';
  if (!s.ok) {
    throw refuse(text, {
      message: s.message,
      at: req.termsAt.price ?? 0,
      length: 5,
      example: `iv ${v.kind} ${level(v.K)} ${v.expiry} price ${num((s.boundValue || v.price) * 1.05 + 0.01)} spot ${level(v.S)} rate ${rate(v.r)}`,
    });
  }
  const json = {
    kind: 'iv',
    iv: s.iv,
    vega: s.vega,
    type: v.kind,
    strike: v.K,
    expiry: v.expiry,
    years: v.T,
    price: v.price,
    asof: v.asof,
    market: { spot: v.S, rate: v.r, yield: v.q },
    model: ivModel,
    ...(v.jumps ? { jumps: v.jumps } : {}),
    notes: r.notes,
    ...(mark ? { mark: markJson(mark, env.now) } : {}),
  };
  const txt = [
    `Implied vol of ${v.kind} ${level(v.K)} ${shortDate(v.expiry)} at ${num(v.price)}: ${rate(Number(s.iv.toFixed(6)))}`,
    `vega ${num(s.vega, 4)} per vol point · spot ${level(v.S)} · rate ${rate(v.r)} · yield ${rate(v.q)} · asof ${v.asof}`,
    `Assumptions: ${ivModel}, continuous rate and yield.`,
    ...r.notes.map((n) => `Note: ${n}`),
    ...(mark ? [markLine(mark, env.now)] : []),
  ].join('\n');
  const what = `iv ${v.kind} ${level(v.K)} ${shortDate(v.expiry)} @${num(v.price)}`;
  const stale = mark && isStale(mark.at, env.now) ? ` · mark ${mark.symbol} stale` : '';
  return {
    answer: answer({ verb: 'iv', headline: `${what} → ${pct(s.iv, 2)}${stale}`, text: txt, json }),
    summary: { position: what, iv: s.iv, asof: v.asof, spot: v.S, rate: v.r, yield: v.q, price: v.price },
  };
}

function doTouch(text: string, req: Extract<Request, { verb: 'touch' }>, env: Env): Computed {
  const mark = markFor(text, env, req.terms.on, req.termsAt.on);
  const r = resolveTouch(req, { today: env.today, now: env.nowIso, text, ...(mark ? { mark: termsOfMark(mark) } : {}) });
  if (!r.ok) throw refuse(text, r.error);
  const t = r.touch;
  const jumps = t.view.jumps && t.view.jumps.intensity > 0 ? t.view.jumps : undefined;
  const dir = t.level >= t.S ? 'above' : 'below';
  let pv: number, prn: number, bv: number, brn: number;
  let mc: { view: number; riskNeutral: number; paths: number } | undefined;
  if (jumps) {
    // first passage with jumps has no closed form: a seeded Monte Carlo with its standard error;
    // the chance of ending beyond is exact from the Poisson mixture of lognormals
    const opts = { paths: TOUCH_MC_PATHS, seed: 1 };
    const v = touchProbJumps(t.S, t.level, t.T, t.view.drift, t.q, t.view.vol, jumps, opts);
    const n = touchProbJumps(t.S, t.level, t.T, t.rate, t.q, t.view.vol, jumps, opts);
    pv = v.prob;
    prn = n.prob;
    mc = { view: v.stderr, riskNeutral: n.stderr, paths: v.paths };
    const beyond = (drift: number) => {
      const d = walkDistribution(t.S, t.T, t.q, { drift, vol: t.view.vol, jumps });
      return dir === 'above' ? spotSf(d, t.level) : spotCdf(d, t.level);
    };
    bv = beyond(t.view.drift);
    brn = beyond(t.rate);
  } else {
    pv = touchProb(t.S, t.level, t.T, t.view.drift, t.q, t.view.vol);
    prn = touchProb(t.S, t.level, t.T, t.rate, t.q, t.view.vol);
    bv = probBeyondAtEnd(t.S, t.level, t.T, t.view.drift, t.q, t.view.vol);
    brn = probBeyondAtEnd(t.S, t.level, t.T, t.rate, t.q, t.view.vol);
  }
  const model = jumps ? 'merton-jumps' : 'lognormal';
  const json = {
    kind: 'touch',
    level: t.level,
    by: t.by,
    years: t.T,
    asof: t.asof,
    market: { spot: t.S, rate: t.rate, yield: t.q },
    view: { drift: t.view.drift, vol: t.view.vol, model, ...(jumps ? { jumps } : {}) },
    probTouchView: pv,
    probTouchRiskNeutral: prn,
    probBeyondAtEndView: bv,
    probBeyondAtEndRiskNeutral: brn,
    ...(mc ? { monteCarlo: { paths: mc.paths, seed: 1, stderrView: mc.view, stderrRiskNeutral: mc.riskNeutral } } : {}),
    notes: r.notes,
    ...(mark ? { mark: markJson(mark, env.now) } : {}),
  };
  const pm = (p: number, se?: number) => (se === undefined ? pct(p) : `${pct(p)} ±${pct(se, 2)}`);
  const rows = [
    `Touching ${level(t.level)} (${dir} spot ${level(t.S)}) by ${t.by}`,
    `                       view   risk-neutral`,
    `chance of touching  ${pm(pv, mc?.view).padStart(7)}  ${pm(prn, mc?.riskNeutral).padStart(13)}`,
    `chance ending ${dir === 'above' ? 'above' : 'below'} ${pct(bv).padStart(7)}  ${pct(brn).padStart(13)}`,
    '',
    `Assumptions: asof ${t.asof} · view drift ${rate(t.view.drift)}, vol ${rate(t.view.vol)}${jumps ? `, jumps ${num(jumps.intensity, 2)}/yr ${rate(jumps.mean)} ±${rate(jumps.sd)}` : ''} · rate ${rate(t.rate)} · yield ${rate(t.q)} · ${jumps ? 'Merton jump diffusion' : 'lognormal walk'}, continuous monitoring.`,
    ...(mc ? [`Note: touching under jumps by Monte Carlo (${mc.paths.toLocaleString('en-US')} paths, seed 1; ± is one standard error); ending beyond is exact.`] : []),
    ...r.notes.map((n) => `Note: ${n}`),
    ...(mark ? [markLine(mark, env.now)] : []),
  ];
  const what = `touch ${level(t.level)} by ${t.by}`;
  const stale = mark && isStale(mark.at, env.now) ? ` · mark ${mark.symbol} stale` : '';
  return {
    answer: answer({ verb: 'touch', headline: `${what}: ${pct(pv)} under the view${stale}`, text: rows.join('\n'), json }),
    summary: {
      position: what,
      probTouch: pv,
      probTouchRiskNeutral: prn,
      asof: t.asof,
      by: t.by,
      spot: t.S,
      rate: t.rate,
      yield: t.q,
      drift: t.view.drift,
      vol: t.view.vol,
    },
  };
}

type Rerunnable = Extract<Request, { verb: 'check' | 'compare' | 'iv' | 'touch' }>;

function isRerunnable(r: Request): r is Rerunnable {
  return r.verb === 'check' || r.verb === 'compare' || r.verb === 'iv' || r.verb === 'touch';
}

function evaluate(text: string, req: Rerunnable, env: Env): Computed {
  switch (req.verb) {
    case 'check':
      return doCheck(text, req, env);
    case 'compare':
      return doCompare(text, req, env);
    case 'iv':
      return doIv(text, req, env);
    case 'touch':
      return doTouch(text, req, env);
  }
}

/**
 * Writes the entry before the answer goes out. A store that cannot take it (read-only, full,
 * busy, refused input) costs only the number: the answer is returned, flagged in `warnings`.
 */
function logEntry(env: Env, verb: string, text: string, req: Request, c: Computed): Answer {
  const { ctx } = env;
  if (!ctx.store) return c.answer;
  try {
    const e = ctx.store.appendCheck({
      channel: ctx.channel,
      user: ctx.user,
      at: env.nowIso,
      verb,
      text,
      normalized: JSON.stringify(req),
      summary: c.summary,
    });
    return { ...c.answer, logNumber: e.number };
  } catch (err) {
    if (!(err instanceof StoreError)) throw err;
    return {
      ...c.answer,
      warnings: [...c.answer.warnings, `Not logged: ${err.message}. The answer is complete, but it has no number in the log, so \`again\` cannot rerun it.`],
    };
  }
}

// ---------------------------------------------------------------------------------------------
// again

/** Start of the number in an `again N` request, for the caret. */
function againNumberAt(text: string): number {
  const m = /^\s*again\s+/i.exec(text);
  return m ? m[0].length : 0;
}

function isIsoDay(v: unknown): v is string {
  return typeof v === 'string' && /^\d{4}-\d{2}-\d{2}$/.test(v);
}

/**
 * The logged text with its asof pinned to the day it was answered, when it was left to default
 * (or said `asof today`): `again 17` reruns #17 as of its own day; `again 17 asof today` moves it.
 */
function pinAsof(entry: LogEntry): { text: string; day?: string } {
  const p = parse(entry.text);
  if (!p.ok) return { text: entry.text };
  const r = p.request;
  const asofs = r.verb === 'compare' ? (r.checks ?? []).map((c) => c.terms.asof) : isRerunnable(r) ? [r.terms.asof] : [];
  if (asofs.length === 0 || asofs.some((a) => a !== undefined && a !== 'today')) return { text: entry.text };
  const s = entry.summary;
  const parts = Array.isArray(s.parts) ? (s.parts as CheckSummary[]) : [];
  const t = Date.parse(entry.at);
  const day = isIsoDay(s.asof) ? s.asof : isIsoDay(parts[0]?.asof) ? (parts[0].asof as string) : Number.isFinite(t) ? isoDay(new Date(t)) : undefined;
  if (!day) return { text: entry.text };
  const pinned = applyAgain(entry.text, { verb: 'again', number: entry.number, rest: `asof ${day}`, restAt: 0 });
  return pinned.ok ? { text: pinned.text, day } : { text: entry.text };
}

const FMT: Record<string, (v: unknown) => string> = {
  position: (v) => String(v),
  asof: (v) => String(v),
  horizon: (v) => String(v),
  by: (v) => String(v),
  spot: (v) => level(v as number),
  price: (v) => num(v as number),
  rate: (v) => rate(v as number),
  yield: (v) => rate(v as number),
  drift: (v) => rate(v as number),
  vol: (v) => rate(v as number),
};

/** What differs between two summaries' inputs, in words ("spot 100 → 102"). */
function inputChanges(before: CheckSummary, after: CheckSummary): string[] {
  const out: string[] = [];
  for (const [k, f] of Object.entries(FMT)) {
    const a = before[k];
    const b = after[k];
    if (a === undefined || b === undefined) continue;
    const fa = f(a);
    const fb = f(b);
    if (fa !== fb) out.push(k === 'position' ? `position ${fa} → ${fb}` : `${k} ${fa} → ${fb}`);
  }
  return out;
}

const isNum = (v: unknown): v is number => typeof v === 'number' && Number.isFinite(v);

function pts(d: number): string {
  const v = Math.abs(d * 100).toFixed(1);
  return `${d < 0 && v !== '0.0' ? '−' : '+'}${v} pts`;
}

/** Chance and expected P&L then and now ("chance of profit 48.1% → 52.3% (+4.2 pts) · …"). */
function figureChanges(verb: string, before: CheckSummary, after: CheckSummary): string {
  const pair = (label: string, a: unknown, b: unknown, f: (x: number) => string, d: (x: number) => string) =>
    isNum(a) && isNum(b) ? `${label} ${f(a)} → ${f(b)} (${d(b - a)})` : null;
  const moneyD = (x: number) => money(x, { sign: true });
  const items =
    verb === 'iv'
      ? [pair('iv', before.iv, after.iv, (x) => pct(x, 2), pts)]
      : verb === 'touch'
        ? [pair('chance of touching', before.probTouch, after.probTouch, (x) => pct(x), pts)]
        : [
            pair('chance of profit', before.probProfit, after.probProfit, (x) => pct(x), pts),
            pair('expected P&L', before.expectedPnl, after.expectedPnl, moneyD, moneyD),
          ];
  const got = items.filter((x): x is string => x !== null);
  return got.length ? got.join(' · ') : 'no figures of the earlier check to set against';
}

function doAgain(text: string, req: AgainRequest, env: Env): Answer {
  const store = needStore(text, env, 'again');
  const n = req.number;
  const at = againNumberAt(text);
  const entry = storeCall(text, 'the log could not be read', at, () => store.get(env.ctx.channel, n));
  if (!entry) {
    // the same words whether #n belongs to another channel or to none
    throw refuseFact(text, { message: `no check #${n} in this channel; \`log\` lists this channel's checks and their numbers`, at, length: String(n).length, example: 'log 20' });
  }
  const pinned = pinAsof(entry);
  const re = applyAgain(pinned.text, req, text);
  if (!re.ok) throw refuse(text, re.error);
  const eff = re.text;
  const p = parse(eff);
  if (!p.ok || !isRerunnable(p.request)) {
    throw refuseFact(text, { message: `check #${n} could not be rerun from the log; write the request out in full`, at, length: String(n).length, example: EXAMPLES.check });
  }
  let c: Computed;
  try {
    c = evaluate(eff, p.request, env);
  } catch (err) {
    if (!(err instanceof Refused)) throw err;
    throw new Refused({
      kind: 'rejected',
      message: `again ${n} reruns check #${n} as the request quoted below.\n${err.reply.message}`,
      at: req.rest ? req.restAt : at,
    });
  }
  const verb = p.request.verb;
  const before = entry.summary;
  const after = c.summary;
  const lines: string[] = [];
  lines.push(`Again #${n} (${entry.verb} by ${entry.user}, ${whenUtc(entry.at)} UTC)${req.rest.trim() ? ` with: ${req.rest.trim()}` : ', as logged'}`);
  const changed: string[] = [];
  const partsB = Array.isArray(before.parts) ? (before.parts as CheckSummary[]) : null;
  const partsA = Array.isArray(after.parts) ? (after.parts as CheckSummary[]) : null;
  if (partsA) {
    partsA.forEach((pa, k) => {
      const pb = partsB?.[k];
      if (!pb) return;
      const ch = inputChanges(pb, pa);
      if (ch.length) changed.push(`part ${k + 1}: ${ch.join(', ')}`);
    });
  } else {
    changed.push(...inputChanges(before, after));
  }
  lines.push(changed.length ? `changed: ${changed.join(' · ')}` : `changed: nothing — the same inputs as #${n}`);
  if (pinned.day && !/\basof\b/i.test(req.rest)) lines.push(`asof ${pinned.day} kept from #${n} (add \`asof today\` to move it)`);
  if (partsA) {
    partsA.forEach((pa, k) => {
      const pb = partsB?.[k];
      lines.push(`${k + 1}: ${pb ? figureChanges('check', pb, pa) : `no part ${k + 1} in #${n}`}`);
    });
  } else {
    lines.push(figureChanges(verb, before, after));
  }
  lines.push(`request run: ${cut(eff, 400)}`);
  const a: Answer = {
    ...c.answer,
    verb: 'again',
    headline: `again #${n} · ${c.answer.headline}`,
    text: `${lines.join('\n')}\n\n${c.answer.text}`,
    json: { ...c.answer.json, again: { of: n, request: eff, changes: req.rest.trim(), changed, before: entry.summary } },
  };
  return logEntry(env, verb, eff, p.request, { answer: a, summary: { ...after, againOf: n } });
}

// ---------------------------------------------------------------------------------------------
// log and mark

function doLog(text: string, req: LogRequest, env: Env): Answer {
  const store = needStore(text, env, 'log');
  const entries = storeCall(text, 'the log could not be read', 0, () => store.recent(env.ctx.channel, req.count));
  const listing = logText(entries, req.count, !env.ctx.inWorkspace);
  return answer({
    verb: 'log',
    headline: '',
    text: listing.text,
    json: {
      kind: 'log',
      entries: entries.map((e) => ({
        number: e.number,
        user: e.user,
        at: e.at,
        verb: e.verb,
        text: e.text,
        summary: e.summary,
        permalink: e.permalink,
        delivered: e.delivered,
      })),
    },
    ephemeral: true,
    ...(listing.links.length ? { links: listing.links } : {}),
  });
}

function markRecord(m: Mark) {
  return { symbol: m.symbol, spot: m.spot ?? null, iv: m.iv ?? null, yield: m.yield ?? null, rate: m.rate ?? null, user: m.user, at: m.at };
}

function doMark(text: string, req: MarkRequest, env: Env): Answer {
  const store = needStore(text, env, 'mark');
  const channel = env.ctx.channel;
  if (!req.symbol) {
    const marks = storeCall(text, 'the marks of this channel could not be read', 0, () => store.listMarks(channel));
    return answer({
      verb: 'mark',
      headline: '',
      text: marksText(marks, env.now),
      json: { kind: 'marks', marks: marks.map((m) => ({ ...markRecord(m), ...markJson(m, env.now) })) },
      ephemeral: true,
    });
  }
  const sym = req.symbol.toUpperCase();
  const symAt = Math.max(0, text.toUpperCase().indexOf(sym));
  const prev = storeCall(text, 'the marks of this channel could not be read', symAt, () => store.getMark(channel, sym));
  const t = req.terms;
  if (t.spot === undefined && t.iv === undefined && t.yield === undefined && t.rate === undefined) {
    // `mark SYMBOL` alone shows that mark
    if (!prev) {
      throw refuseFact(text, { message: `no mark for ${sym} in this channel: record one with spot, iv, yield or rate`, at: symAt, length: sym.length, example: `mark ${sym} spot 84.20 iv 31% yield 1.2%` });
    }
    return answer({
      verb: 'mark',
      headline: '',
      text: marksText([prev], env.now),
      json: { kind: 'marks', marks: [{ ...markRecord(prev), ...markJson(prev, env.now) }] },
      ephemeral: true,
    });
  }
  const m: Mark = {
    channel,
    symbol: sym,
    ...(t.spot !== undefined ? { spot: t.spot } : {}),
    ...(t.iv !== undefined ? { iv: t.iv } : {}),
    ...(t.yield !== undefined ? { yield: t.yield } : {}),
    ...(t.rate !== undefined ? { rate: t.rate } : {}),
    user: env.ctx.user,
    at: env.nowIso,
  };
  storeCall(text, `the mark for ${sym} was not recorded`, symAt, () => store.putMark(m));
  const lines = [
    `Mark ${sym} recorded for this channel by ${m.user} at ${whenUtc(m.at)} UTC: ${markTermsWords(m)}.`,
    `Requests that say \`on ${sym}\` take these terms; terms written in a request override them.`,
  ];
  const unset = (['spot', 'iv', 'yield', 'rate'] as const).filter((k) => m[k] === undefined);
  if (prev) {
    const dropped = unset.filter((k) => prev[k] !== undefined);
    lines.push(
      `It replaces the mark of ${whenUtc(prev.at)} UTC by ${prev.user} (${markTermsWords(prev) || 'no terms'})` +
        (dropped.length ? `; its ${dropped.join(', ')} ${dropped.length === 1 ? 'is' : 'are'} not carried over (a mark is one snapshot): write ${dropped.length === 1 ? 'it' : 'them'} again to keep ${dropped.length === 1 ? 'it' : 'them'}.` : '.'),
    );
  }
  if (unset.length) {
    const defaults = unset.filter((k) => k !== 'spot');
    lines.push(
      `Not in this mark: ${unset.join(', ')}.` +
        (unset.includes('spot') ? ` Requests on ${sym} must write spot.` : '') +
        (defaults.length ? ` Where a request on ${sym} leaves ${defaults.join(' or ')} out, the usual default applies.` : ''),
    );
  }
  return answer({
    verb: 'mark',
    headline: '',
    text: lines.join('\n'),
    json: { kind: 'mark', ...markRecord(m), ...(prev ? { replaced: markRecord(prev) } : {}) },
  });
}

// ---------------------------------------------------------------------------------------------
// Entry points

export async function ask(text: string, ctx: AskContext): Promise<Reply> {
  return askSync(text, ctx);
}

/** The same as `ask`, synchronously (the engine does no I/O except the store, which is synchronous). */
export function askSync(text: string, ctx: AskContext): Reply {
  try {
    const env = envOf(ctx);
    const p = parse(text);
    if (!p.ok) {
      try {
        ctx.store?.countRejected(ctx.channel);
      } catch {
        /* a counter that cannot be written loses nothing the asker needs */
      }
      return reject(text, p.error);
    }
    const req = p.request;
    switch (req.verb) {
      case 'help':
        return answer({ verb: 'help', headline: '', text: helpText(req.topic), json: { kind: 'help', topic: req.topic ?? null }, ephemeral: true });
      case 'log':
        return doLog(text, req, env);
      case 'mark':
        return doMark(text, req, env);
      case 'again':
        return doAgain(text, req, env);
      case 'check':
      case 'compare':
      case 'iv':
      case 'touch':
        return logEntry(env, req.verb, text, req, evaluate(text, req, env));
    }
  } catch (err) {
    if (err instanceof Refused) {
      try {
        ctx.store?.countRejected(ctx.channel);
      } catch {
        /* as above: the counter is not worth a lost reply */
      }
      return err.reply;
    }
    return {
      kind: 'rejected',
      // the internal text stays out of the reply: it can name code paths and inputs of no use to the asker
      message:
        'Kolmo could not answer this request: the engine ran into a problem computing it (an internal error, not a reading of your request).\n' +
        'Nothing was logged. Try nearer dates or milder jump terms, or `help` for the grammar.',
      at: 0,
    };
  }
}
