/**
 * The channel's marks as the verbs use them: the mark for `on SYMBOL`, and the line and JSON every
 * answer that used one carries (who recorded it, when, its age, stale or not).
 */
import { exampleOf } from '../request/examples.js';
import type { MarkTerms } from '../request/resolve.js';
import { ageWords, isStale, whenUtc } from '../report/log.js';
import { level, rate } from '../report/format.js';
import { StoreError, type Mark } from '../store/store.js';
import type { ResolveContext } from '../request/resolve/context.js';
import { refuseFact, type Here, type VerbEnv } from './verb.js';

/**
 * `resolves` and `answersHere` of a verb whose request resolves on one `on SYMBOL` (check, iv,
 * touch): it resolves in a context, and it is answered in a channel that has the mark it names
 * and where it resolves on that mark.
 */
export function resolvedOnItsMark<R extends { terms: { on?: string } }>(resolve: (req: R, ctx: ResolveContext) => { ok: boolean }) {
  return {
    resolves: (req: R, ctx: ResolveContext): boolean => resolve(req, ctx).ok,
    answersHere: async (req: R, here: Here): Promise<boolean> => {
      const c = await here.context(req.terms.on);
      return c !== null && resolve(req, c).ok;
    },
  };
}

export function termsOfMark(m: Mark): MarkTerms {
  return { symbol: m.symbol, spot: m.spot, iv: m.iv, yield: m.yield, rate: m.rate, vol: m.vol, drift: m.drift, driftSe: m.driftSe, at: m.at };
}

/**
 * The channel's mark for `on SYMBOL` (undefined when the request has no `on`). A missing mark or
 * an unreadable log refuses the request with the caret on the symbol.
 */
export function markFor(text: string, env: VerbEnv, symbol: string | undefined, at: number | undefined): Mark | undefined {
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
      example: exampleOf('check'),
    });
  }
  const marks = env.marks;
  if (marks instanceof StoreError) {
    throw refuseFact(text, { message: `the marks of this channel could not be read: ${marks.message}`, at: where, length: 1, example: 'help' });
  }
  const m = marks?.get(sym);
  if (!m) {
    throw refuseFact(text, {
      message: `no mark for ${sym} in this channel: record one with \`mark ${sym} spot …\` or write the market terms`,
      at: where,
      length: symbol.length + 3,
      example,
    });
  }
  env.used?.set(sym, m);
  return m;
}

/** The resolver's context for a request, with the mark's terms when it names one. */
export function resolveContext(text: string, env: VerbEnv, mark: Mark | undefined) {
  return { today: env.today, now: env.nowIso, text, ...(mark ? { mark: termsOfMark(mark) } : {}) };
}

function markAge(m: Mark, now: Date): string {
  const w = ageWords(now.getTime() - Date.parse(m.at));
  return w === 'just now' ? 'just now' : `${w} old`;
}

/** The line every answer that used a mark carries: who recorded it, when, its age, stale or not. */
export function markLine(m: Mark, now: Date): string {
  if (isStale(m.at, now)) {
    return `Warning: mark ${m.symbol} is older than a day (recorded ${whenUtc(m.at)} UTC by ${m.user}, ${markAge(m, now)}): record a fresh one with \`mark ${m.symbol} spot …\`.`;
  }
  return `Mark ${m.symbol}: recorded ${whenUtc(m.at)} UTC by ${m.user}, ${markAge(m, now)}.`;
}

export function markJson(m: Mark, now: Date) {
  return {
    symbol: m.symbol,
    user: m.user,
    at: m.at,
    ageMinutes: Math.max(0, Math.floor((now.getTime() - Date.parse(m.at)) / 60_000)) || 0,
    stale: isStale(m.at, now),
  };
}

/** " · mark FERNWK stale" for a headline, when the mark is older than a day. */
export function staleWords(mark: Mark | undefined, now: Date): string {
  return mark && isStale(mark.at, now) ? ` · mark ${mark.symbol} stale` : '';
}

export function markTermsWords(m: Pick<Mark, 'spot' | 'iv' | 'yield' | 'rate' | 'vol' | 'drift' | 'driftSe'>): string {
  const w: string[] = [];
  if (m.spot !== undefined) w.push(`spot ${level(m.spot)}`);
  if (m.iv !== undefined) w.push(`iv ${rate(m.iv)}`);
  if (m.yield !== undefined) w.push(`yield ${rate(m.yield)}`);
  if (m.rate !== undefined) w.push(`rate ${rate(m.rate)}`);
  if (m.vol !== undefined) w.push(`vol ${rate(m.vol)}`);
  if (m.drift !== undefined) w.push(`drift ${rate(m.drift)}${m.driftSe ? ` ± ${rate(m.driftSe)}` : ''}`);
  return w.join(' · ');
}

export function markRecord(m: Mark) {
  return {
    symbol: m.symbol,
    spot: m.spot ?? null,
    iv: m.iv ?? null,
    yield: m.yield ?? null,
    rate: m.rate ?? null,
    ...(m.vol !== undefined ? { vol: m.vol } : {}),
    ...(m.drift !== undefined ? { drift: m.drift, driftSe: m.driftSe ?? 0 } : {}),
    user: m.user,
    at: m.at,
  };
}

/** A mark as the log keeps it (markRecord) back into a Mark; undefined when it does not read. */
export function markOfRecord(r: Record<string, unknown>, channel: string): Mark | undefined {
  if (typeof r.symbol !== 'string' || typeof r.at !== 'string') return undefined;
  const n = (v: unknown) => (typeof v === 'number' && Number.isFinite(v) ? v : undefined);
  const m: Mark = { channel, symbol: r.symbol, user: typeof r.user === 'string' ? r.user : 'unknown', at: r.at };
  for (const k of ['spot', 'iv', 'yield', 'rate', 'vol', 'drift', 'driftSe'] as const) {
    const v = n(r[k]);
    if (v !== undefined) m[k] = v;
  }
  if (m.drift === undefined || !m.driftSe) delete m.driftSe;
  return m;
}
