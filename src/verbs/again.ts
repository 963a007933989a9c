/**
 * `again N [changes]`: reruns check #N of the channel's log (with changes), says what changed in
 * the inputs and the figures, and logs the rerun under the verb it ran, with the request it ran.
 * The rewriting of the logged text is in src/request/again.ts.
 */
import { againSchema } from '../request/schema.js';
import type { Tok } from '../request/lex.js';
import { LIMITS } from '../request/limits.js';
import { readBody } from '../request/grammar/body.js';
import { Cursor } from '../request/grammar/cursor.js';
import { rejectAt } from '../request/grammar/errors.js';
import { readWholeNumber } from '../request/grammar/values.js';
import { ALL_TERMS } from '../request/grammar/words.js';
import { applyAgain } from '../request/again.js';
import { exampleOf } from '../request/examples.js';
import { parse } from '../request/parse.js';
import type { AgainRequest, Request } from '../request/types.js';
import { level, num, rate } from '../report/format.js';
import { cut } from '../report/compare.js';
import { whenUtc } from '../report/log.js';
import type { CheckSummary, LogEntry } from '../store/store.js';
import { checkFigureChanges } from './check.js';
import type { Mark } from '../store/store.js';
import { markOfRecord, markTermsWords } from './marks.js';
import { isoDay, needStore, refuse, refuseFact, Refused, storeCall, type Outcome, type VerbEnv, type Verb } from './verb.js';

/** Start of the number in an `again N` request, for the caret. */
function againNumberAt(text: string): number {
  const m = /^\s*again\s+/i.exec(text);
  return m ? m[0].length : 0;
}

function isIsoDay(v: unknown): v is string {
  return typeof v === 'string' && /^\d{4}-\d{2}-\d{2}$/.test(v);
}

/** The asofs a logged request wrote (one per part of a comparison). */
function asofsOf(r: Request, env: VerbEnv): (string | undefined)[] {
  if (r.verb === 'compare') return (r.checks ?? []).map((c) => c.terms.asof);
  return env.verb(r.verb).rerun !== undefined && 'terms' in r ? [(r.terms as { asof?: string }).asof] : [];
}

/**
 * The logged text with its asof pinned to the day it was answered, when it was left to default
 * (or said `asof today`): `again 17` reruns #17 as of its own day; `again 17 asof today` moves it.
 */
function pinAsof(entry: LogEntry, env: VerbEnv): { text: string; day?: string } {
  const p = parse(entry.text);
  if (!p.ok) return { text: entry.text };
  const asofs = asofsOf(p.request, env);
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

const partsOf = (s: CheckSummary) => (Array.isArray(s.parts) ? (s.parts as CheckSummary[]) : null);

/** The lines that set the rerun against the logged check: what changed, and the figures then and now. */
function comparisonLines(n: number, verb: Request['verb'], before: CheckSummary, after: CheckSummary, env: VerbEnv): { changed: string[]; figures: string[] } {
  const changed: string[] = [];
  const partsB = partsOf(before);
  const partsA = partsOf(after);
  if (!partsA) {
    changed.push(...inputChanges(before, after));
    return { changed, figures: [(env.verb(verb).figureChanges ?? checkFigureChanges)(before, after)] };
  }
  partsA.forEach((pa, k) => {
    const pb = partsB?.[k];
    if (!pb) return;
    const ch = inputChanges(pb, pa);
    if (ch.length) changed.push(`part ${k + 1}: ${ch.join(', ')}`);
  });
  const figures = partsA.map((pa, k) => {
    const pb = partsB?.[k];
    return `${k + 1}: ${pb ? checkFigureChanges(pb, pa) : `no part ${k + 1} in #${n}`}`;
  });
  return { changed, figures };
}

/** The logged entry and the request it reruns (changes applied, asof pinned), or a refusal. */
async function rerunOf(text: string, req: AgainRequest, env: VerbEnv) {
  const store = needStore(text, env, 'again');
  const n = req.number;
  const at = againNumberAt(text);
  const entry = await storeCall(text, 'the log could not be read', at, () => store.get(env.ctx.channel, n));
  if (!entry) {
    // the same words whether #n belongs to another channel or to none
    throw refuseFact(text, { message: `no check #${n} in this channel; \`log\` lists this channel's checks and their numbers`, at, length: String(n).length, example: 'log 20' });
  }
  if (entry.deletedAt) {
    // a tombstone keeps only its number (deleted by its asker from the answer's buttons)
    throw refuseFact(text, { message: `check #${n} was deleted by the person who asked it; only its number is kept`, at, length: String(n).length, example: 'log 20' });
  }
  let pinned: { text: string; day?: string };
  if (req.now) {
    const moved = applyAgain(entry.text, { verb: 'again', number: entry.number, rest: 'asof today', restAt: 0 });
    pinned = { text: moved.ok ? moved.text : entry.text };
  } else pinned = pinAsof(entry, env);
  const re = applyAgain(pinned.text, req, text);
  if (!re.ok) throw refuse(text, re.error);
  const p = parse(re.text);
  if (!p.ok || env.verb(p.request.verb).rerun === undefined) {
    throw refuseFact(text, { message: `check #${n} could not be rerun from the log; write the request out in full`, at, length: String(n).length, example: exampleOf('check') });
  }
  return { entry, pinned, eff: re.text, request: p.request, at };
}

async function runAgain(text: string, req: AgainRequest, env: VerbEnv): Promise<Outcome> {
  const n = req.number;
  const { entry, pinned, eff, request, at } = await rerunOf(text, req, env);
  // by default as logged: its day and the marks it used (the log keeps them; an entry logged
  // without them falls back to the channel's marks as they are now); `now`: today's marks
  const loggedMarks = Array.isArray(entry.summary.marks)
    ? (entry.summary.marks as Record<string, unknown>[]).map((m) => markOfRecord(m, env.ctx.channel)).filter((m): m is Mark => !!m)
    : [];
  const used = env.used ?? new Map<string, Mark>();
  const runEnv: VerbEnv = { ...env, used };
  if (!req.now && loggedMarks.length) runEnv.marks = new Map([...(env.marks instanceof Map ? env.marks : []), ...loggedMarks.map((m) => [m.symbol, m] as const)]);
  let c: Outcome;
  try {
    c = await env.verb(request.verb).run(eff, request, runEnv);
  } catch (err) {
    if (!(err instanceof Refused)) throw err;
    throw new Refused({
      kind: 'rejected',
      message: `again ${n} reruns check #${n} as the request quoted below.\n${err.reply.message}`,
      at: req.rest ? req.restAt : at,
    });
  }
  const after = c.log!.summary;
  const { changed, figures } = comparisonLines(n, request.verb, entry.summary, after, env);
  const lines = [
    `Again #${n} (${entry.verb} by ${entry.user}, ${whenUtc(entry.at)} UTC), ${
      req.now
        ? `on today's mark${used.size ? ` (${[...used.values()].map((m) => `${m.symbol} of ${whenUtc(m.at)} UTC`).join(', ')})` : ''} and as of today`
        : `as logged${loggedMarks.length ? ` (mark ${loggedMarks.map((m) => `${m.symbol} of ${whenUtc(m.at)} UTC: ${markTermsWords(m)}`).join('; ')}); \`again ${n} now\` reruns it on today's mark` : ''}`
    }${req.rest.trim() ? ` with: ${req.rest.trim()}` : ''}`,
    changed.length ? `changed: ${changed.join(' · ')}` : `changed: nothing — the same inputs as #${n}`,
    ...(pinned.day && !/\basof\b/i.test(req.rest) ? [`asof ${pinned.day} kept from #${n} (add \`asof today\` to move it)`] : []),
    ...figures,
    `request run: ${cut(eff, 400)}`,
  ];
  return {
    answer: {
      ...c.answer,
      verb: 'again',
      headline: `again #${n} · ${c.answer.headline}`,
      text: `${lines.join('\n')}\n\n${c.answer.text}`,
      json: { ...c.answer.json, again: { of: n, request: eff, changes: req.rest.trim(), changed, before: entry.summary } },
    },
    log: { verb: request.verb, text: eff, request, summary: { ...after, againOf: n } },
  };
}

export function parseAgain(src: string, toks: Tok[]): AgainRequest {
  const semi = toks.find((t) => t.text === ';');
  if (semi) throw rejectAt(semi, `again takes overrides for one check; ';' belongs to compare`, undefined, 'again');
  const c = new Cursor(src, toks, 1, toks.length, 'again');
  const nTok = c.needed('again needs the number of a check in the log, e.g. again 17', '17');
  const number = readWholeNumber(c, nTok, 'again', 1, LIMITS.againMax, '17');
  // `again N now`: on today's date and the channel's marks as they are now (default: as logged)
  let now = false;
  if (c.peek()?.low === 'now') {
    c.next();
    now = true;
  }
  const restTok = c.peek();
  if (!restTok) return { verb: 'again', number, rest: '', restAt: src.length, ...(now ? { now } : {}) };
  // validate the overrides now, so a typo is caught before the log is read
  readBody(c, 'again');
  return { verb: 'again', number, rest: src.slice(restTok.at, c.end()), restAt: restTok.at, ...(now ? { now } : {}) };
}

export const again: Verb<AgainRequest> = {
  name: 'again',
  schema: againSchema,
  body: { terms: [...ALL_TERMS, 'price', 'by'], legs: true },
  words: ['again'],
  grammar: parseAgain,
  readsSemicolons: true,
  overview: { usage: 'again N [changes]', says: 'rerun one', place: { with: 'log' } },
  buttons: 'vary',
  example: 'again 1 spot 102',
  help: {
    title: 'again — rerun a logged check, optionally with changes',
    lines: [
      'again N [TERMS or LEGS]   (terms override; legs replace the logged legs)',
      'By default #N reruns exactly as logged: its day and the mark it used. again N now reruns',
      'it as of today on the channel\'s mark as it is now; asof today moves only the day.',
    ],
    examples: ['again 1', 'again 2 spot 102 drift 5%', 'again 1 now'],
  },
  run: runAgain,
  // the entry it names is in this channel's log
  answersHere: async (req, here) => {
    const e = await here.store?.get(here.channel, req.number);
    return !!e && !e.deletedAt;
  },
  entryOf: (req) => req.number,
  // the cost of the check it reruns: its logged text with the changes applied
  cost: (req, text, ctx) => {
    const stored = ctx.logged?.(req.number);
    if (stored === undefined) return null;
    const merged = applyAgain(stored, req, text);
    if (!merged.ok) return null;
    const q = parse(merged.text);
    if (!q.ok) return null;
    const c = ctx.costOf(q.request, merged.text);
    return { units: c ? c.units : 0, at: req.restAt, what: 'rerun' };
  },
};
