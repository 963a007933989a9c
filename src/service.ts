/**
 * The engine seam every shell uses: text in, Reply out. Parses, resolves against the channel's
 * marks, computes, logs the check (before the shell posts it) and returns the answer parts.
 * Never throws: anything unexpected becomes a rejection the asker sees.
 */
import { runCheck } from './core/outcome.js';
import { impliedVol } from './core/iv.js';
import { probBeyondAtEnd, touchProb } from './core/touch.js';
import type { CheckInput } from './core/types.js';
import { formatError, parse } from './request/parse.js';
import { resolveCheck, resolveIv, resolveTouch, type MarkTerms, type ResolvedCheck } from './request/resolve.js';
import { helpText } from './request/help.js';
import type { CheckRequest, ParseError, Request } from './request/types.js';
import { CAUTION, type Answer, type Rejection, type Reply } from './reply.js';
import type { CheckAssembly, CheckJson, LegJson } from './result.js';
import { checkHeadline, checkText, positionWords } from './report/text.js';
import { level, num, pct, rate, shortDate } from './report/format.js';
import type { Store } from './store/store.js';

export interface AskContext {
  channel: string;
  user: string;
  now?: Date;
  store?: Store | null;
  inWorkspace?: boolean;
}

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
  const rnInput: CheckInput = {
    ...input,
    view: { drift: input.market.rate, vol: input.view.vol, ...(input.view.jumps ? { jumps: input.view.jumps } : {}) },
  };
  const rn = runCheck(rnInput).outcome;
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
    notes: [...rc.notes, ...core.notes],
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

function markOf(store: Store | null | undefined, channel: string, symbol: string | undefined): MarkTerms | undefined {
  if (!store || !symbol) return undefined;
  const m = store.getMark(channel, symbol.toUpperCase());
  if (!m) return undefined;
  return { symbol: m.symbol, spot: m.spot, iv: m.iv, yield: m.yield, rate: m.rate, at: m.at };
}

function logCheck(ctx: AskContext, text: string, req: Request, a: Answer, summary: Record<string, unknown> & { position: string }): Answer {
  if (!ctx.store) return a;
  try {
    const e = ctx.store.appendCheck({
      channel: ctx.channel,
      user: ctx.user,
      at: (ctx.now ?? new Date()).toISOString(),
      verb: req.verb,
      text,
      normalized: JSON.stringify(req),
      summary,
    });
    return { ...a, logNumber: e.number };
  } catch (err) {
    const why = err instanceof Error ? err.message : String(err);
    return { ...a, warnings: [...a.warnings, `Not logged: ${why}`] };
  }
}

function doCheck(text: string, req: CheckRequest, ctx: AskContext): Reply {
  const today = isoDay(ctx.now ?? new Date());
  const mark = markOf(ctx.store, ctx.channel, req.terms.on);
  if (req.terms.on && !mark) {
    return reject(text, {
      message: `no mark for ${req.terms.on.toUpperCase()} in this channel: record one with \`mark ${req.terms.on.toUpperCase()} spot …\` or write the market terms`,
      at: req.termsAt.on ?? 0,
      length: req.terms.on.length + 3,
      example: `mark ${req.terms.on.toUpperCase()} spot 84.20 iv 31% yield 1.2%`,
    });
  }
  const r = resolveCheck(req, { today, mark });
  if (!r.ok) return reject(text, r.error);
  const asm = computeCheck(r.check);
  const a = answer({
    verb: 'check',
    headline: checkHeadline(asm.json),
    text: checkText(asm.json),
    json: asm.json as unknown as Record<string, unknown>,
    chart: chartInputOf(asm),
  });
  return logCheck(ctx, text, req, a, {
    position: positionWords(asm.json),
    probProfit: asm.json.outcome.probProfit,
    expectedPnl: asm.json.outcome.expectedPnl,
    viewEdge: asm.json.outcome.viewEdge,
  });
}

function doIv(text: string, req: Extract<Request, { verb: 'iv' }>, ctx: AskContext): Reply {
  const today = isoDay(ctx.now ?? new Date());
  const r = resolveIv(req, { today, mark: markOf(ctx.store, ctx.channel, req.terms.on) });
  if (!r.ok) return reject(text, r.error);
  const v = r.iv;
  const s = impliedVol(v.kind, v.price, v.S, v.K, v.T, v.r, v.q);
  if (!s.ok) {
    return reject(text, {
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
    model: 'Black-Scholes-Merton (European)',
  };
  const txt = [
    `Implied vol of ${v.kind} ${level(v.K)} ${shortDate(v.expiry)} at ${num(v.price)}: ${rate(Number(s.iv.toFixed(6)))}`,
    `vega ${num(s.vega, 4)} per vol point · spot ${level(v.S)} · rate ${rate(v.r)} · yield ${rate(v.q)} · asof ${v.asof}`,
    'Assumptions: Black-Scholes-Merton, European exercise, continuous rate and yield.',
  ].join('\n');
  return answer({ verb: 'iv', headline: `iv ${v.kind} ${level(v.K)} ${shortDate(v.expiry)} @${num(v.price)} → ${pct(s.iv, 2)}`, text: txt, json });
}

function doTouch(text: string, req: Extract<Request, { verb: 'touch' }>, ctx: AskContext): Reply {
  const today = isoDay(ctx.now ?? new Date());
  const r = resolveTouch(req, { today, mark: markOf(ctx.store, ctx.channel, req.terms.on) });
  if (!r.ok) return reject(text, r.error);
  const t = r.touch;
  const pv = touchProb(t.S, t.level, t.T, t.view.drift, t.q, t.view.vol);
  const prn = touchProb(t.S, t.level, t.T, t.rate, t.q, t.view.vol);
  const bv = probBeyondAtEnd(t.S, t.level, t.T, t.view.drift, t.q, t.view.vol);
  const brn = probBeyondAtEnd(t.S, t.level, t.T, t.rate, t.q, t.view.vol);
  const dir = t.level >= t.S ? 'above' : 'below';
  const json = {
    kind: 'touch',
    level: t.level,
    by: t.by,
    years: t.T,
    asof: t.asof,
    market: { spot: t.S, rate: t.rate, yield: t.q },
    view: { drift: t.view.drift, vol: t.view.vol, model: 'lognormal' },
    probTouchView: pv,
    probTouchRiskNeutral: prn,
    probBeyondAtEndView: bv,
    probBeyondAtEndRiskNeutral: brn,
    notes: r.notes,
  };
  const rows = [
    `Touching ${level(t.level)} (${dir} spot ${level(t.S)}) by ${t.by}`,
    `                       view   risk-neutral`,
    `chance of touching  ${pct(pv).padStart(7)}  ${pct(prn).padStart(13)}`,
    `chance ending ${dir === 'above' ? 'above' : 'below'} ${pct(bv).padStart(7)}  ${pct(brn).padStart(13)}`,
    '',
    `Assumptions: asof ${t.asof} · view drift ${rate(t.view.drift)}, vol ${rate(t.view.vol)} · rate ${rate(t.rate)} · yield ${rate(t.q)} · lognormal walk, continuous monitoring.`,
    ...r.notes.map((n) => `Note: ${n}`),
  ];
  return answer({ verb: 'touch', headline: `touch ${level(t.level)} by ${t.by}: ${pct(pv)} under the view`, text: rows.join('\n'), json });
}

export async function ask(text: string, ctx: AskContext): Promise<Reply> {
  return askSync(text, ctx);
}

/** The same as `ask`, synchronously (the engine does no I/O except the store, which is synchronous). */
export function askSync(text: string, ctx: AskContext): Reply {
  try {
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
      case 'check':
        return doCheck(text, req, ctx);
      case 'iv':
        return doIv(text, req, ctx);
      case 'touch':
        return doTouch(text, req, ctx);
      default:
        return reject(text, {
          message: `\`${req.verb}\` is not available yet`,
          at: 0,
          length: req.verb.length,
          example: 'check +1 call 105 2027-03-19 @3.10 iv 28% spot 100 rate 4.5% drift 9%',
        });
    }
  } catch (err) {
    const why = err instanceof Error ? err.message : String(err);
    return {
      kind: 'rejected',
      message: `Kolmo could not answer this request: ${why}\nNothing was logged. Try \`help\` for the grammar.`,
      at: 0,
    };
  }
}
